"""Exact unit factors for expected values: NIST SP 811, Appendix B (the 1959
international pound and inch are exact by definition)."""

from fractions import Fraction

LB = Fraction("0.45359237")  # kg per lb, exact
IN = Fraction("0.0254")  # m per in, exact
FT = 12 * IN  # m per ft (0.3048 m), exact
OZ = LB / 16  # kg per ounce (avoirdupois), exact
G_N = Fraction("9.80665")  # standard acceleration of gravity, m/s², exact
SLUG = LB * G_N / FT  # kg per slug (1 lbf·s²/ft), exact; SP 811 prints 1.459390 E+01
GAL = 231 * IN**3  # m³ per US liquid gallon (231 in³), exact; SP 811 prints 3.785412 E-03
#: SI prefixes and the tonne and litre (SP 811 / the SI brochure), exact
PREFIXED = {"g": Fraction(1, 1000), "t": Fraction(1000), "mm": Fraction(1, 1000), "cm": Fraction(1, 100),
            "L": Fraction(1, 1000)}
