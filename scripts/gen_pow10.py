# The cached powers of ten for Grisu2: 10^k for k = -300, -292, ..., 324 as
# f * 2^e, f the 64-bit significand rounded to nearest (exact rationals).
from fractions import Fraction
rows = []
for k in range(-300, 325, 8):
    x = Fraction(10) ** k
    e = x.numerator.bit_length() - x.denominator.bit_length() - 64
    while x / Fraction(2) ** e >= 2 ** 64: e += 1
    while x / Fraction(2) ** e < 2 ** 63: e -= 1
    q = x / Fraction(2) ** e
    f = q.numerator // q.denominator
    if q - f >= Fraction(1, 2): f += 1
    if f == 2 ** 64: f //= 2; e += 1
    rows.append((f, e, k))
for f, e, k in rows:
    print("    {0x%016XULL, %d, %d}," % (f, e, k))
print(len(rows))
