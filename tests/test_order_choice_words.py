"""The order each rule picks, with its reason in words (exact wording: ours), on invented data.

The invented standards: 8 levels in triplicate on a gently bending response (seeded noise, values written
out so that they do not depend on a random generator). The picks agree with the
extra-sum-of-squares (step) tests checked against statsmodels elsewhere (tests/test_against_statsmodels.py);
stepdown's per-test level is alpha / (max order - 1), after Anderson (1962) with an equal Bonferroni split.
"""

import pytest

from degreewise import engine

X = [0.5, 0.5, 0.5, 1.0, 1.0, 1.0, 2.0, 2.0, 2.0, 4.0, 4.0, 4.0, 6.0, 6.0, 6.0, 8.0, 8.0, 8.0, 10.0, 10.0, 10.0,
     12.0, 12.0, 12.0]
Y = [0.9442096383626593, 1.010487377015498, 1.0037360539292965, 1.6444846461606166, 1.6551015244446776,
     1.6436307903483287, 3.108486317878598, 3.0771967780477194, 3.1173442808128273, 5.627633760051295,
     5.798327438734977, 5.71517839199222, 8.154018922663706, 8.113171683301157, 8.101045071646256,
     10.303155507929878, 10.321225676376505, 10.269873506465327, 12.192360691071489, 12.234284930540463,
     12.15648296790264, 13.804280824813429, 13.899749093137476, 13.846471708815605]
LACK = " Lack of fit at order 2: not significant (p = 0.45)."

WORDS = {
    "stepdown": "the highest term is tested first, in its own fit, each at 0.05/3 = 0.0167 (Anderson's top-down "
                "procedure); not significant: x^4 p = 0.73, x^3 p = 0.27; significant: x^2 p = 4.8e-22.",
    "forward": "x^2 added significantly (p = 4.8e-22); adding x^3 to order 2 is not significant "
               "(F = 1.27, p = 0.27 >= 0.05).",
    "aicc": "smallest AICc at order 2 (-76.7345; order 1: 28.5291, order 3: -74.9869, order 4: -71.5315).",
    "bic": "smallest BIC at order 2 (-74.1275; order 1: 30.8633, order 3: -72.43, order 4: -69.4043).",
    "press": "smallest PRESS at order 2 (0.0499264; order 1: 4.18729, order 3: 0.053087, order 4: 0.0563134).",
}


def reason(rule: str) -> str:
    return f"rule {rule}, alpha 0.05, max order 4: " + WORDS[rule] + LACK


@pytest.mark.parametrize("rule", engine.RULES)
def test_each_rule_gives_its_order_and_reason(rule):
    cal = engine.Calibration(X, Y)
    choice = engine.choose_order(cal, rule)
    assert (choice.order, choice.rule, choice.alpha, choice.max_order) == (2, rule, 0.05, 4)
    assert engine.order_reason(cal, choice) == reason(rule)
    assert choice.settings == f"rule {rule}, alpha 0.05, max order 4"
    assert engine.choose_order(engine.Calibration(X, Y), rule) == choice  # compared field by field


def test_the_why_row_of_calib_stats():
    import degreewise

    column = [[v] for v in X], [[v] for v in Y]
    rows = dict(degreewise.calib_stats(*column))
    assert (rows["why this order"], rows["settings"]) == (reason("stepdown"), "rule stepdown, alpha 0.05, max order 4")
    rows = dict(degreewise.calib_stats(*column, 3))
    assert rows["why this order"] == (
        "order 3 given as the order argument (a number, or a cell such as CALIB_ORDER with its own rule, alpha "
        "and max order). Lack of fit at order 3: not significant (p = 0.47). For comparison, the default rule "
        "picks order 2: " + reason("stepdown"))
    assert rows["settings"] == "order argument; for comparison rule stepdown, alpha 0.05, max order 4"
