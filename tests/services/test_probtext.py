"""Probability text: the Wilson score interval against scipy's, and no false precision (issue 11.13)."""
from __future__ import annotations

import pytest
import scipy
from scipy.stats import binomtest

from ledger.services.probtext import prob_text, wilson


@pytest.mark.parametrize("k,n", [(10_000, 10_000), (0, 10_000), (37, 100), (9_812, 10_000), (1, 3)])
def test_wilson_matches_scipy(k, n):
    # Reference: scipy.stats.binomtest(...).proportion_ci(method="wilson"), 95 % (scipy >= 1.7; Wilson 1927,
    # JASA 22:209).
    ref = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
    lo, hi = wilson(k, n)
    assert lo == pytest.approx(ref.low, abs=1e-12), scipy.__version__
    assert hi == pytest.approx(ref.high, abs=1e-12)


def test_no_failing_sample_gives_a_bound_not_a_zero_width_figure():
    text = prob_text(1.0, 10_000)
    ref = binomtest(10_000, 10_000).proportion_ci(method="wilson").low  # scipy, as above
    assert text.startswith("p > ") and "±" not in text
    bound = float(text.split(">")[1])
    assert bound <= ref < bound + 1e-4  # rounded down, never above the interval
    assert prob_text(0.0, 10_000).startswith("p < ")


def test_precision_follows_the_standard_error():
    # se = sqrt(p(1-p)/n) (binomial; common practice): 0.5 at n=100 gives se 0.05 -> two decimals of p is all
    # the samples support; at n=10,000 and p=0.9812, se = 0.00135 -> four decimals.
    assert prob_text(0.5, 100) == "p 0.500 ± 0.050"
    assert prob_text(0.9812, 10_000) == "p 0.9812 ± 0.0014"
