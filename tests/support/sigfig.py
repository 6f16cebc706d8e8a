"""Significant figures written independently of the program (Python's decimal module), for
expected texts: round half even to `sig` figures, thousands separated, trailing zeros dropped.
The rule itself is stated in docs/numbers.md."""

from decimal import ROUND_HALF_EVEN, Decimal
from fractions import Fraction


def sig_text(x, sig: int = 5) -> str:
    d = Decimal(x.numerator) / Decimal(x.denominator) if isinstance(x, Fraction) else Decimal(repr(float(x)))
    if d == 0:
        return "0"
    exp = d.adjusted()  # power of ten of the leading digit
    places = max(0, sig - 1 - exp)
    q = d.quantize(Decimal(1).scaleb(-places), rounding=ROUND_HALF_EVEN)
    text = f"{q:,f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def length_text(x, ref, sig: int = 5) -> str:
    """A lone length as docs/numbers.md states it: `sig` significant figures of the larger of |x|
    and `ref` (1 m in the display unit: 1000 mm, 39.37 in), trailing zeros dropped."""
    d = Decimal(x.numerator) / Decimal(x.denominator) if isinstance(x, Fraction) else Decimal(repr(float(x)))
    r = Decimal(ref.numerator) / Decimal(ref.denominator) if isinstance(ref, Fraction) else Decimal(repr(ref))
    big = max(abs(d), r)
    places = max(0, sig - 1 - big.adjusted())
    q = d.quantize(Decimal(1).scaleb(-places), rounding=ROUND_HALF_EVEN)
    text = f"{q:,f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text
