"""Exact unit factors for expected values: NIST SP 811, Appendix B (the 1959
international pound and inch are exact by definition)."""

from fractions import Fraction

LB = Fraction("0.45359237")  # kg per lb, exact
IN = Fraction("0.0254")  # m per in, exact
