"""Progress on stderr for slow loads, only when stderr is a terminal.

Nothing is printed for the first second, so quick commands stay quiet; a
script reading stderr from a pipe never sees progress lines.
"""

from __future__ import annotations

import sys
import threading
import time


class LoadProgress:
    def __init__(self, label: str, *, delay: float = 1.0, stream=None):
        self.stream = stream or sys.stderr
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())
        self.label = label
        self.delay = delay
        self.phase = "reading"
        self.fraction: float | None = None
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None
        self._shown = False

    def __call__(self, phase: str, fraction: float | None = None) -> None:
        self.phase, self.fraction = phase, fraction

    def __enter__(self):
        if self.enabled:
            self._thread = threading.Thread(target=self._run, daemon=True)
            self._thread.start()
        return self

    def _run(self) -> None:
        start = time.monotonic()
        spin = "|/-\\"
        k = 0
        while not self._stop.wait(0.2):
            if time.monotonic() - start < self.delay:
                continue
            pct = f" {self.fraction * 100:3.0f}%" if self.fraction else ""
            self.stream.write(f"\r{spin[k % 4]} {self.label}: {self.phase}{pct}   ")
            self.stream.flush()
            self._shown = True
            k += 1

    def __exit__(self, *exc) -> None:
        self._stop.set()
        if self._thread is not None:
            self._thread.join()
        if self._shown:
            self.stream.write("\r\x1b[K")
            self.stream.flush()
