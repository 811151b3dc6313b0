"""Issue 11.4 in the console's entry detail: an approval's stored check names the limiting tank (runs out
first, common practice) and the least-margin tank apart; a check stored before the split, whose
``limiting_tank`` meant the least margin after reserves, is shown under that meaning."""
from ledger.tui.dialogs.detail_fields import decision_lines


def _tanks(check):
    return {label: value for label, value, _ in decision_lines({"plan": 3, "check": check}) if "tank" in label}


def test_new_checks_show_both_tanks():
    lines = _tanks({"verdict": "feasible", "limiting_tank": "ox", "least_margin_tank": "fuel"})
    assert lines == {"limiting tank": "ox (runs out first)", "least margin tank": "fuel (least margin after reserves)"}


def test_checks_stored_before_the_split_keep_their_meaning():
    assert _tanks({"verdict": "feasible", "limiting_tank": "fuel"}) == {
        "least margin tank": "fuel (least margin after reserves)"}
