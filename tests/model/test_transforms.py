"""The power-transform check (Box & Cox 1964) and the sentence that reports it."""
from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy import stats

from tradeoff.model.transforms import box_cox, power_advice

# Box & Cox (1964), J. R. Statist. Soc. B 26, 211-252, the textile experiment: cycles
# to failure of worsted yarn in a 3^3 factorial (length of test specimen, amplitude of
# the loading cycle, load), runs with the first factor slowest (from memory).
TEXTILE = [674, 370, 292, 338, 266, 210, 170, 118, 90,
           1414, 1198, 634, 1022, 620, 438, 442, 332, 220,
           3636, 3184, 2000, 1568, 1070, 566, 1140, 884, 360]


def _first_order_basis():
    X = np.array(list(itertools.product([-1.0, 0.0, 1.0], repeat=3)))
    return np.linalg.qr(np.column_stack([np.ones(len(X)), X]))[0], X


def _profile_by_hand(y, X, lam):
    """-n/2 log(SSE / n) of the normalised power transform (Box & Cox 1964, sec. 3),
    the regression done by statsmodels OLS: an independent route to the same curve."""
    import statsmodels.api as sm

    gm = np.exp(np.mean(np.log(y)))
    z = np.log(y) * gm if abs(lam) < 1e-12 else (y ** lam - 1) / (lam * gm ** (lam - 1))
    fit = sm.OLS(z, sm.add_constant(X)).fit()
    return -0.5 * len(y) * np.log(fit.ssr / len(y))


def test_textile_power_is_the_published_one():
    y = np.array(TEXTILE, dtype=float)
    Q, X = _first_order_basis()
    bc = box_cox(y, Q)
    # Box & Cox report lambda about -0.06 with an approximate 95 % interval of about
    # -0.18 to 0.06 for the first-order model, so the log scale (from memory)
    assert bc["lambda"] == pytest.approx(-0.06, abs=0.01)
    assert bc["low"] == pytest.approx(-0.18, abs=0.01)
    assert bc["high"] == pytest.approx(0.06, abs=0.01)
    assert bc["suggest"] == "log"
    # the maximum and the interval's ends against the profile worked out by hand:
    # the ends lie where the log-likelihood falls chi2(0.95, 1) / 2 below the maximum
    top = _profile_by_hand(y, X, bc["lambda"])
    grid = np.linspace(-0.5, 0.5, 201)
    assert top >= max(_profile_by_hand(y, X, g) for g in grid) - 1e-9
    drop = stats.chi2.ppf(0.95, 1) / 2
    for end in (bc["low"], bc["high"]):
        assert top - _profile_by_hand(y, X, end) == pytest.approx(drop, abs=0.02)


def test_textile_sentence_names_the_log_scale_and_the_interval():
    Q, _ = _first_order_basis()
    bc = box_cox(np.array(TEXTILE, dtype=float), Q)
    sentence, helps = power_advice(bc, "none")
    assert helps
    assert sentence == ("a log scale would fit better than the measured scale: the best "
                        "power is -0.06, and any power from -0.18 to 0.06 fits about as well")
    # on the log scale already, nothing to change
    sentence, helps = power_advice(bc, "log")
    assert not helps and sentence.startswith("a log scale suits this response: ")


@pytest.mark.parametrize("bc, transform, expected", [
    ({"lambda": 0.94, "low": -2.0, "high": 3.0, "suggest": "none"}, "none",
     "a power transform would not help: the best power is 0.94, and any power from -2.0 "
     "up fits about as well"),
    ({"lambda": 0.94, "low": -2.04, "high": 2.5, "suggest": "none"}, "none",
     "a power transform would not help: the best power is 0.94, and any power from -2.0 "
     "to 2.5 fits about as well"),
    ({"lambda": 0.48, "low": 0.3, "high": 0.7, "suggest": "sqrt"}, "none",
     "a square-root scale would fit better than the measured scale: the best power is "
     "0.48, and any power from 0.30 to 0.70 fits about as well"),
    ({"lambda": -1.3, "low": -1.9, "high": -0.8, "suggest": "other"}, "none",
     "no scale offered here fits well: the best power is -1.30, and any power from -1.9 "
     "to -0.8 fits about as well; the measured scale (power 1), square root (0.5) and log "
     "(0) all lie outside"),
    ({"lambda": 3.0, "low": 0.2, "high": 3.0, "suggest": "none"}, "none",
     "a power transform would not help: the best power is 3.00 or beyond, and any power "
     "from 0.2 up fits about as well"),
])
def test_sentence_for_each_case(bc, transform, expected):
    # the wording of the check, written out (common practice: powers 1, 0.5, 0 are the
    # measured, square-root and log scales)
    assert power_advice(bc, transform)[0] == expected
