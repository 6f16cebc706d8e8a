"""Pure computation and the domain model: numpy and pint only, SI inside.

No file, terminal or Textual import lives here (tests/test_layers.py proves it).
Shared foundations sit at this level: `errors` (the one error base), `units`
(the one pint registry), `display` (terminal-safe text), `caution`.
"""
