"""The TOML writer's strings and numbers, checked against outside references.

- Strings: the standard library's tomllib (a TOML v1.0.0 reader) reads every
  escaped string back to the same text, and the escapes are the ones the TOML
  v1.0.0 spec ("String": basic strings) requires: quote, backslash and the
  control characters U+0000-U+001F, U+007F.
- Numbers in SI (factor 1): the text is Python's repr, the shortest text that
  reads back to the identical float (Python docs, "Floating-Point Arithmetic:
  Issues and Limitations"; David Gay's correctly rounded conversions), and
  tomllib reads it back to the identical float (sign of zero included).
- Numbers in another unit: exact NIST SP 811 factors (lb = 0.45359237 kg,
  in = 0.0254 m); a value typed in that unit is written back as typed, and the
  quick path picks exactly what the full ranking of `number`'s docstring picks
  (written out in full below as `ranked`, independently of the program).
"""

from __future__ import annotations

import math
import re
import tomllib
from fractions import Fraction

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from steelyard.io.ledger.toml_write import key, number, string

SETTINGS = dict(max_examples=400, deadline=None, suppress_health_check=list(HealthCheck))

# Exact factors to SI (NIST SP 811, Appendix B): pound (avoirdupois), inch, and their products
LB, IN = Fraction("0.45359237"), Fraction("0.0254")
FACTORS = [float(LB), float(IN), float(LB * IN * IN), float(IN ** 3), float(LB / IN ** 3), 0.001, 1e-6, 1000.0,
           float(Fraction(1, 3))]

# Text without surrogates (TOML text is Unicode scalar values, TOML v1.0.0 "Spec")
texts = st.text(st.characters(blacklist_categories=("Cs",)), max_size=40)
controls = st.text(st.sampled_from([chr(c) for c in range(0x20)] + ["\x7f", '"', "\\", "a", "é", "\u2028"]),
                   max_size=20)
#: TOML v1.0.0: "Any Unicode character may be used except those that must be escaped: quotation mark,
#: backslash, and the control characters other than tab (U+0000 to U+0008, U+000A to U+001F, U+007F)"
MUST_ESCAPE = re.compile(r'["\\\x00-\x08\x0a-\x1f\x7f]')


def _read_back(text: str) -> object:
    return tomllib.loads(f"v = {text}\n")["v"]


@settings(**SETTINGS)
@given(st.one_of(texts, controls))
@example("")
@example('say "hi"\\\n\t\x00\x1f\x7f\u0080\U0001f680')
def test_every_string_reads_back_through_tomllib(s):
    out = string(s)
    assert _read_back(out) == s  # tomllib: a TOML v1.0.0 reader
    inner = out[1:-1]
    # nothing the spec forbids stays raw (a backslash only as the start of an escape)
    assert not MUST_ESCAPE.search(inner.replace('\\"', "").replace("\\\\", "").replace("\\", ""))


@settings(**SETTINGS)
@given(st.one_of(texts, controls).filter(bool))
def test_every_key_reads_back_through_tomllib(k):
    assert tomllib.loads(f"{key(k)} = 1\n") == {k: 1}  # tomllib: a TOML v1.0.0 reader


finite = st.floats(allow_nan=False, allow_infinity=False, width=64)
subnormal = st.floats(min_value=-2.2250738585072014e-308, max_value=2.2250738585072014e-308,
                      allow_subnormal=True)


@settings(**SETTINGS)
@given(st.one_of(finite, subnormal))
@example(0.0)
@example(-0.0)
@example(5e-324)
@example(-1.7976931348623157e308)
@example(1e16)
@example(123456789012345678.0)
@example(0.1 + 0.2)
def test_si_number_is_the_shortest_round_trip_text(x):
    text = number(x)
    assert text == repr(x)  # Python's repr: shortest text that reads back exactly (Python docs; Gay)
    back = _read_back(text)  # tomllib reads TOML floats (v1.0.0 "Float")
    assert back == x and math.copysign(1.0, back) == math.copysign(1.0, x)


def test_non_finite_numbers_are_toml_specials():
    # TOML v1.0.0 "Float": inf, -inf and nan are the special float values
    assert [number(v) for v in (math.inf, -math.inf, math.nan)] == ["inf", "-inf", "nan"]
    assert _read_back(number(math.inf, float(LB))) == math.inf


def ranked(x: float, factor: float) -> str:
    """The full ranking `number` documents, written out: candidates are x / factor, its three
    floats either side and its 6- to 17-digit roundings; exact read-back first, then within one
    ulp of x, then the nearest; the shortest text (then the smallest) wins within each rank."""
    v = x / factor
    cands = {float(f"{v:.{d}g}") for d in range(6, 18)} | {v}
    up = down = v
    for _ in range(3):
        up, down = math.nextafter(up, math.inf), math.nextafter(down, -math.inf)
        cands |= {up, down}
    best = None
    for c in cands:
        if not math.isfinite(c):
            continue
        err = abs(c * factor - x)
        grade = 0 if err == 0 else (1 if err <= math.ulp(x) else 2)
        t = repr(c)
        r = (grade, err if grade == 2 else 0.0, len(t), t)
        best = r if best is None or r < best else best
    return best[3] if best else repr(v)


typed = st.builds(lambda digits, exp, neg: (-1 if neg else 1) * digits * 10.0 ** exp,
                  st.integers(1, 10 ** 12), st.integers(-12, 8), st.booleans())


@settings(**SETTINGS)
@given(typed, st.sampled_from(FACTORS))
@example(76.1, float(LB))
@example(12.3456, float(LB))
@example(9.99999, float(IN))
@example(0.001, float(IN))
def test_a_value_typed_in_a_unit_is_written_back_as_typed(t, factor):
    text = repr(t)  # what a user typed (shortest form of that float)
    x = t * factor  # what the reader makes of it in SI
    out = number(x, factor)
    assert float(out) * factor == x  # reads back to the identical float
    assert out == ranked(x, factor)
    if len(text.replace("-", "").replace(".", "").strip("0")) <= 14 and "e" not in text:
        assert len(out) <= len(text)  # never longer than what was typed


@settings(**SETTINGS)
@given(st.one_of(finite, subnormal), st.sampled_from(FACTORS))
@example(-0.0, float(LB))
@example(0.0, float(IN))
@example(-0.0, 1000.0)
@example(5e-324, float(IN))
@example(1.7976931348623157e308, 1000.0)
@example(1e-3 * 0.45359237, float(LB))
@example(9.999999999999e12 * 0.0254, float(IN))
def test_quick_path_picks_what_the_full_ranking_picks(x, factor):
    out = number(x, factor)
    assert out == ranked(x, factor)
    back = float(out) * factor
    if ranked(x, factor) and float(ranked(x, factor)) * factor == x:
        assert back == x


@settings(**SETTINGS)
@given(st.floats(1e-3, 1e13), st.sampled_from(FACTORS), st.integers(-2, 2))
def test_quick_path_near_values_typed_in_the_unit(t, factor, nudge):
    # values a few ulps from a typed one: the quick path's edge (one exact candidate or none)
    x = t * factor
    for _ in range(abs(nudge)):
        x = math.nextafter(x, math.copysign(math.inf, nudge))
    assert number(x, factor) == ranked(x, factor)
