"""Probabilities as text, with no more precision than the number of samples supports.

A Monte Carlo fraction k/n with k = n (no failing sample) is not "1.0000 ± 0.0000": all one can say is
that p lies above a bound. The bound used is the Wilson score interval (E. B. Wilson, "Probable inference,
the law of succession, and statistical inference", J. Am. Stat. Assoc. 22 (1927) 209-212), which stays
inside [0, 1] and is not zero-width at k = 0 or k = n. Elsewhere the estimate is shown with as many
decimals as its standard error sqrt(p(1-p)/n) has down to its first significant digit.
"""
from __future__ import annotations

import math

Z95 = 1.959963984540054
"""Two-sided 95 % normal quantile (Phi^-1(0.975)): the Wilson interval's level."""


def wilson(k: int, n: int, z: float = Z95) -> tuple[float, float]:
    """Wilson score interval (low, high) for k successes in n trials (Wilson 1927, eq. for p at z)."""
    if n <= 0:
        return 0.0, 1.0
    p = k / n
    z2 = z * z
    centre = (p + z2 / (2 * n)) / (1 + z2 / n)
    half = z / (1 + z2 / n) * math.sqrt(p * (1 - p) / n + z2 / (4 * n * n))
    return max(0.0, centre - half), min(1.0, centre + half)


def _floor(x: float, digits: int) -> float:
    return math.floor(x * 10 ** digits) / 10 ** digits


def _ceil(x: float, digits: int) -> float:
    return math.ceil(x * 10 ** digits) / 10 ** digits


def prob_text(p: float, n: int | None, prefix: str = "p ") -> str:
    """'p > 0.9996' when no sample failed, 'p < 0.0004' when none passed, else 'p 0.981 ± 0.001'.

    Bounds are rounded outward so the text never claims more than the interval does."""
    if not n:
        return f"{prefix}{p:.4f}"
    k = round(p * n)
    if k >= n:
        return f"{prefix}> {_floor(wilson(n, n)[0], 4):.4f}"
    if k <= 0:
        return f"{prefix}< {_ceil(wilson(0, n)[1], 4):.4f}"
    se = math.sqrt(p * (1 - p) / n)
    digits = max(2, 1 - math.floor(math.log10(se)))
    return f"{prefix}{p:.{digits}f} ± {se:.{digits}f}"


__all__ = ["wilson", "prob_text", "Z95"]
