"""Two-person approval (services.approvalrule and everywhere "approved" is decided).

The rule itself (a safety-critical command needs a second, different person's approval) is common practice
in spacecraft operations; no published standard is quoted for its details. Which details are the project's
own choice, and why:
- "above above_dv" is strictly greater: a plan of exactly the threshold needs one approval. A threshold
  named "above" reads as "more than"; and the threshold value given in a craft file (e.g. 5 m/s) is then the
  largest plan a single person may approve.
- A rejection by anyone ends the round: only approvals after the latest rejection count.
- Names are compared with case and blanks ignored, so a re-typed name is not a second person.
- Stale approvals (the existing rule: the ledger moved under the approval's check) do not count.
Unit facts: 1 ft = 0.3048 m exactly (international yard and pound agreement, 1959); 1 h = 3600 s (SI
Brochure, 9th edition, Table 8).
"""
from __future__ import annotations

from dataclasses import replace

import pytest

from ledger.core.craft import Craft, Engine, Reserve, Tank
from ledger.core.entries import Entry
from ledger.errors import InputError
from ledger.services import approvalrule, approvals, execution, uncertainty
from ledger.services.craftfile import craft_from_document
from ledger.services.ledger import Ledger, create

T0 = 1_767_225_600.0
SAMPLES = 2000

DOC = {
    "craft": {"name": "Rule test", "dry_mass": "900 kg"},
    "tanks": [{"id": "t", "fluid": "N2H4", "load": "300 kg", "residual": "3 kg"}],
    "engines": [{"id": "e", "isp": "225 s", "thrust": "22 N", "feeds": {"t": 1}}],
    "reserves": [{"id": "eol", "engine": "e", "dv": "25 m/s"}],
}


def doc_with(approval):
    return dict(DOC, operations={"approval": approval})


def test_rule_is_read_with_units_like_every_other_speed():
    c = craft_from_document(doc_with({"approvers": 2, "above_dv": "5 m/s"}), "x.yaml")
    assert approvalrule.rule(c) == {"approvers": 2, "above_dv_m_s": 5.0}
    ft = craft_from_document(doc_with({"approvers": 3, "above_dv": "10 ft/s"}), "x.yaml")
    assert ft.extra["approval"]["above_dv_m_s"] == pytest.approx(3.048, rel=1e-12)  # 1 ft = 0.3048 m exactly
    kmh = craft_from_document(doc_with({"approvers": 2, "above_dv": "36 km/h"}), "x.yaml")
    assert kmh.extra["approval"]["above_dv_m_s"] == pytest.approx(10.0, rel=1e-12)  # 36 000 m / 3600 s
    every = craft_from_document(doc_with({"approvers": 2}), "x.yaml")  # no threshold: every plan
    assert every.extra["approval"]["above_dv_m_s"] == 0.0
    assert approvalrule.rule(craft_from_document(DOC, "x.yaml")) is None


@pytest.mark.parametrize("approval, says", [
    ({"approvers": 0, "above_dv": "5 m/s"}, "approvers"),
    ({"approvers": "two", "above_dv": "5 m/s"}, "approvers"),
    ({"approvers": 2.5, "above_dv": "5 m/s"}, "approvers"),
    ({"approvers": True, "above_dv": "5 m/s"}, "approvers"),
    ({"above_dv": "5 m/s"}, "approvers"),
    ({"approvers": 2, "above_dv": "5 kg"}, "above_dv"),
    ({"approvers": 2, "above_dv": "-5 m/s"}, "above_dv"),
    ({"approvers": 2, "above_dv": "fast"}, "above_dv"),
    ("two people", "operations.approval"),
])
def test_bad_rules_are_one_line_errors_naming_the_field(approval, says):
    with pytest.raises(InputError) as err:
        craft_from_document(doc_with(approval), "x.yaml")
    text = str(err.value)
    assert says in text and "\n" not in text and text.startswith("x.yaml: operations.approval")


def _craft(rule=None):
    c = Craft("svc", 900.0, (Tank("t", "N2H4", 300.0, 3.0),), (Engine("e", 225.0, 22.0, {"t": 1.0}),),
              (Reserve("eol", "e", 25.0),))
    return c if rule is None else replace(c, extra={"approval": rule})


def _plan(dv):
    return Entry(1, "plan", T0, T0, "fd", "", {"engine": "e", "dv": dv})


def test_the_threshold_itself_needs_one_approval_just_above_it_needs_the_rule():
    c = _craft({"approvers": 2, "above_dv_m_s": 5.0})
    assert approvalrule.needed(c, _plan(5.0)) == 1       # exactly at above_dv: not above it
    assert approvalrule.needed(c, _plan(5.000001)) == 2
    assert approvalrule.needed(c, _plan(4.0)) == 1
    assert approvalrule.needed(_craft(), _plan(500.0)) == 1  # no rule: one approval, as before


def _d(seq, kind, by):
    return Entry(seq, kind, T0, T0, by, "", {"plan": 1, "head": {"seq": seq - 1}})


def test_tally_counts_distinct_current_names_only():
    fresh = lambda d: None  # noqa: E731
    one = approvalrule.tally([_d(2, "approve", "A. Okafor")], 2, fresh)
    assert one["approval"] == "partial" and approvalrule.words(one) == "1 of 2 approvals"
    # the same person again, re-typed in another case and spacing: still one name
    same = approvalrule.tally([_d(2, "approve", "A. Okafor"), _d(3, "approve", "a.  okafor ")], 2, fresh)
    assert same["approvals_counted"] == 1 and same["approval"] == "partial"
    two = approvalrule.tally([_d(2, "approve", "A. Okafor"), _d(3, "approve", "B. Lee")], 2, fresh)
    assert two["approval"] == "approved" and two["approvers"] == ["A. Okafor", "B. Lee"]
    # a rejection by anyone rejects, and approvals before it no longer count
    rej = [_d(2, "approve", "A. Okafor"), _d(3, "reject", "C. Diaz"), _d(4, "approve", "B. Lee")]
    assert approvalrule.tally(rej[:2], 2, fresh)["approval"] == "rejected"
    after = approvalrule.tally(rej, 2, fresh)
    assert after["approval"] == "partial" and after["approvers"] == ["B. Lee"]
    # a stale approval does not count; with none left the plan shows stale
    stale = lambda d: "moved" if d.by == "A. Okafor" else None  # noqa: E731
    t = approvalrule.tally([_d(2, "approve", "A. Okafor"), _d(3, "approve", "B. Lee")], 2, stale)
    assert t["approval"] == "partial" and t["stale_approvers"] == {"A. Okafor": "moved"}
    assert approvalrule.tally([_d(2, "approve", "A. Okafor")], 2, stale)["approval"] == "stale"
    assert approvalrule.tally([], 2, fresh)["approval"] == "none"


@pytest.fixture()
def led(tmp_path):
    path = str(tmp_path / "rule.ledger.json")
    create(path, craft_from_document(doc_with({"approvers": 2, "above_dv": "5 m/s"}), "rule.yaml"), by="test")
    led = Ledger(path)
    led.record("plan", {"engine": "e", "dv": 20.0}, at=T0 + 1e8, by="fd")   # 1: under the rule
    led.record("plan", {"engine": "e", "dv": 5.0}, at=T0 + 2e8, by="fd")    # 2: exactly at the threshold
    return led


def _state(led, plan):
    snap = led.snapshot()
    return uncertainty.approvals(snap, uncertainty.run(snap, SAMPLES), 0.99)[plan]


def decide(led, plan, by, kind="approve", note=None):
    return approvals.decide(led, kind, plan, by, note, samples=SAMPLES)


def test_two_distinct_names_approve_and_one_name_cannot_approve_twice(led):
    _, check, warnings = decide(led, 1, "A. Okafor")
    assert check["approvals_counted"] == 1 and check["approvals_needed"] == 2
    assert any("1 of 2 approvals" in w for w in warnings)
    row = _state(led, 1)
    assert row["approval"] == "partial" and row["approvals_counted"] == 1 and row["approvals_needed"] == 2
    before = len(led.snapshot().entries)
    for name in ("A. Okafor", "a. okafor"):
        with pytest.raises(InputError, match="already approved by A. Okafor") as err:
            decide(led, 1, name)
        assert "\n" not in str(err.value)
    assert len(led.snapshot().entries) == before  # nothing written
    _, check, warnings = decide(led, 1, "B. Lee")
    assert check["approvals_counted"] == 2 and not any("approvals" in w for w in warnings)
    row = _state(led, 1)
    assert row["approval"] == "approved" and row["approvals_counted"] == 2
    assert row["approvers"] == ["A. Okafor", "B. Lee"] and row["stale_approvers"] == {}


def test_the_plan_at_the_threshold_is_approved_by_one_name(led):
    decide(led, 2, "A. Okafor")
    row = _state(led, 2)
    assert row["approval"] == "approved" and row["approvals_needed"] == 1 and row["approvals_counted"] == 1


def test_a_rejection_by_anyone_still_rejects_and_resets_the_count(led):
    decide(led, 1, "A. Okafor")
    decide(led, 1, "C. Diaz", kind="reject", note="wrong attitude")
    assert _state(led, 1)["approval"] == "rejected"
    decide(led, 1, "A. Okafor")  # after a rejection the same name may approve again: a new round
    assert _state(led, 1)["approvals_counted"] == 1


def test_a_stale_approval_does_not_count(led):
    decide(led, 1, "A. Okafor")
    # 60 kg of propellant gone (about a fifth of the load): the plan's dv free after falls by tens of m/s
    # (rocket equation), far beyond the staleness tolerance max(0.1 m/s, 1 %).
    led.record("use", {"engine": "e", "propellant": 60.0}, at=T0 + 10, by="ops")
    decide(led, 1, "B. Lee")
    row = _state(led, 1)
    assert row["approval"] == "partial" and row["approvers"] == ["B. Lee"]
    assert "A. Okafor" in row["stale_approvers"] and "dv free after moved" in row["stale_approvers"]["A. Okafor"]
    # the ledger moved since A. Okafor's approval: renewing it is allowed and counts once
    decide(led, 1, "A. Okafor")
    assert _state(led, 1)["approval"] == "approved"


def test_burn_warning_and_approved_only_use_the_rule(led):
    decide(led, 1, "A. Okafor")
    decide(led, 2, "A. Okafor")
    snap = led.snapshot()
    why = execution._approval(snap, 1)
    assert why and "1 of 2 approvals" in why and "above 5 m/s" in why
    assert execution._approval(snap, 2) is None
    assert uncertainty.commitments(snap, approved_only=True) == [("e", 5.0)]
    decide(led, 1, "B. Lee")
    snap = led.snapshot()
    assert execution._approval(snap, 1) is None
    assert sorted(uncertainty.commitments(snap, approved_only=True)) == [("e", 5.0), ("e", 20.0)]


def test_the_approver_is_the_recorded_by():
    e = Entry(4, "approve", T0, T0, "  F. Lead ", "", {"plan": 1})
    assert approvalrule.approver_name(e) == "  F. Lead " and approvalrule.person("  F. Lead ") == "f. lead"


def test_a_store_can_say_which_name_a_decision_is_recorded_under(led):
    """The database store records the authenticated session user whatever --by says: the one-person-twice
    test must compare that name (approvalrule.name_to_record), not the --by text."""
    decide(led, 1, "A. Okafor")

    class SessionUser:
        def __init__(self, inner):
            self.inner = inner

        def recorded_name(self, by):
            return "A. Okafor"

        def __getattr__(self, name):
            return getattr(self.inner, name)

    with pytest.raises(InputError, match="already approved by A. Okafor"):
        approvals.decide(SessionUser(led), "approve", 1, "someone else", None, samples=SAMPLES)
