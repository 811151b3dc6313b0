"""Uncertainty, checks at a confidence, approvals and staleness through the command line (in process).

Invented craft. Unit facts: 1 ft = 0.3048 m exactly (international foot, 1959); g0 = 9.80665 m/s^2.
"""
from __future__ import annotations

import io
import json
import math
import textwrap

import pytest
from scipy import stats

from ledger.cli import main
from ledger.cli.progress import Progress
from ledger.store.ledgerfile import LedgerFile

G0 = 9.80665

CRAFT = textwrap.dedent("""\
    craft:
      name: Test craft Q-3
      dry_mass: 1200 kg
    tanks:
      - {id: ox, fluid: MON-3, load: 330 kg, residual: 5 kg}
      - {id: fuel, fluid: MMH, load: 200 kg, residual: 4 kg}
    engines:
      - {id: lae, isp: 318 s, thrust: 440 N, feeds: {ox: 1.65, fuel: 1}}
      - {id: rcs, isp: 285 s, thrust: 20 N, cant: 15 deg, feeds: {ox: 1.65, fuel: 1}}
    reserves:
      - {id: eol, engine: rcs, dv: 10 m/s}
    """)

# Only the load is uncertain (1 kg); see tests/core/test_montecarlo.py::test_marginal_case_built_on_purpose.
MARGINAL = textwrap.dedent("""\
    craft: {name: Marginal test, dry_mass: 500 kg, dry_mass_sigma: 0}
    tanks: [{id: t, fluid: N2H4, load: 100 kg, residual: 2 kg, load_sigma: 1 kg}]
    engines: [{id: e, isp: 220 s, thrust: 20 N, isp_sigma: 0, thrust_sigma: 0, feeds: {t: 1}}]
    reserves: [{id: eol, engine: e, dv: 20 m/s}]
    """)


def run(capsys, *args):
    code = main([str(a) for a in args])
    out = capsys.readouterr()
    return code, out.out, out.err


def j(capsys, *args):
    code, out, err = run(capsys, *args, "--json")
    assert code in (0, 1, 3), err
    return json.loads(out)


@pytest.fixture()
def led(tmp_path, capsys):
    craft = tmp_path / "craft.yaml"
    craft.write_text(CRAFT)
    path = str(tmp_path / "q3.ledger.json")
    assert run(capsys, "--ledger", path, "init", "--craft", craft)[0] == 0
    return path


def raw(path):
    with open(path, "rb") as fh:
        return fh.read()


def test_sigma_is_stored_in_si_and_bad_sigma_writes_nothing(led, capsys):
    out = j(capsys, "--ledger", led, "burn", "--engine", "lae", "--dv", "10 m/s", "--sigma", "0.5 ft/s")
    rec = LedgerFile(led).records()[-1]
    assert rec["seq"] == out["id"] and rec["data"]["sigma"] == pytest.approx(0.5 * 0.3048, rel=1e-12)
    j(capsys, "--ledger", led, "use", "--engine", "rcs", "--duration", "2 min", "--sigma", "1.5 s")
    assert LedgerFile(led).records()[-1]["data"]["sigma"] == pytest.approx(1.5)
    before = raw(led)
    for args in (("burn", "--engine", "lae", "--dv", "1 m/s", "--sigma", "1 kg"),
                 ("mass", "--delta", "-3 kg", "--sigma", "-0.1 kg"),
                 ("use", "--engine", "rcs", "--propellant", "1 kg", "--sigma", "lots")):
        code, _, err = run(capsys, "--ledger", led, *args)
        assert code == 2 and "--sigma" in err and err.count("\n") == 1
    assert raw(led) == before
    # A correction of the sigma alone reads it in the dimension of the entry's amount (the duration).
    assert run(capsys, "--ledger", led, "correct", "--entry", "2", "--sigma", "3", "--reason", "timing")[0] == 0
    assert LedgerFile(led).records()[-1]["data"]["changes"] == {"sigma": 3.0}


def test_status_gives_low_bounds_at_the_confidence(led, capsys):
    j(capsys, "--ledger", led, "burn", "--engine", "lae", "--dv", "100 m/s")
    a = j(capsys, "--ledger", led, "status", "--samples", "4000")
    b = j(capsys, "--ledger", led, "status", "--samples", "4000", "--confidence", "0.9")
    assert a["confidence"] == 0.99 and b["confidence"] == 0.9
    for t in a["tanks"]:
        # one-sided bounds: below the nominal, and lower the more confidence is asked
        assert a["tanks"][t]["usable_low_kg"] < b["tanks"][t]["usable_low_kg"] < a["tanks"][t]["usable_kg"]
    for e in a["engines"]:
        assert a["engines"][e]["dv_free_low_m_s"] < b["engines"][e]["dv_free_low_m_s"] < a["engines"][e]["dv_free_m_s"]
    assert j(capsys, "--ledger", led, "status", "--samples", "4000") == a  # same seed, same figures
    assert a["uncertainty"]["reserves_probability"] == 1.0
    code, out, _ = run(capsys, "--ledger", led, "status", "--samples", "2000")
    assert code == 0 and "low 99%" in out
    for bad in (("--confidence", "1.5"), ("--confidence", "0.9999", "--samples", "1000"), ("--samples", "0"),
                ("--samples", "99999999999999999999"), ("--seed", "-1")):
        code, _, err = run(capsys, "--ledger", led, "status", *bad)
        assert code == 2 and err.count("\n") == 1


@pytest.mark.parametrize("k, verdict, code", [(3.0, "feasible", 0), (1.0, "marginal", 3), (-0.5, "infeasible", 1)])
def test_check_verdicts_and_exit_status(tmp_path, capsys, k, verdict, code):
    # Margin after the burn and the reserve is k load-sigmas (scaled by E); P(intact) = Phi(k) exactly.
    craft = tmp_path / "m.yaml"
    craft.write_text(MARGINAL)
    path = str(tmp_path / "m.ledger.json")
    run(capsys, "--ledger", path, "init", "--craft", craft)
    E = (2.0 + 500.0) / (100.0 + 500.0 - k * 1.0)
    dv = -220.0 * G0 * math.log(E) - 20.0
    rc, out, err = run(capsys, "--ledger", path, "check", "--engine", "e", "--dv", f"{dv!r} m/s", "--samples", "20000",
                       "--json")
    data = json.loads(out)
    assert rc == code and data["verdict"] == verdict and data["confidence"] == 0.99
    p = stats.norm.cdf(k)
    assert abs(data["probability"] - p) < 4 * math.sqrt(p * (1 - p) / 20000) + 1e-12
    rc, out, _ = run(capsys, "--ledger", path, "check", "--engine", "e", "--dv", f"{dv!r}", "--samples", "20000")
    assert rc == code and verdict.upper() in out


def _plans(capsys, led):
    p1 = j(capsys, "--ledger", led, "plan", "--engine", "lae", "--dv", "150 m/s", "--at", "2027-01-01T00:00:00Z")["id"]
    p2 = j(capsys, "--ledger", led, "plan", "--engine", "rcs", "--dv", "4 m/s", "--at", "2027-02-01T00:00:00Z")["id"]
    return p1, p2


def approval(capsys, led, plan):
    rows = j(capsys, "--ledger", led, "status", "--samples", "2000")["pending_plans"]
    return next(r for r in rows if r["id"] == plan)


def test_approve_records_the_check_and_the_head_it_saw(led, capsys):
    p1, p2 = _plans(capsys, led)
    head = j(capsys, "--ledger", led, "verify")["head"]
    chk = j(capsys, "--ledger", led, "check", "--engine", "lae", "--dv", "150 m/s", "--samples", "2000")
    out = j(capsys, "--ledger", led, "approve", "--plan", p1, "--by", "A. Okafor", "--note", "go", "--samples", "2000")
    data = LedgerFile(led).records()[-1]["data"]
    assert out["kind"] == "approve" and data["plan"] == p1 and data["head"] == {"seq": 2, "hash": head}
    # The plan's check is the same burn on top of every other pending plan: the check without the plan itself
    # (chk counted both plans, so its dv free after is lower by the plan's own 150 m/s share).
    assert data["check"]["verdict"] == "feasible" and data["check"]["commitments"] == 1
    assert data["check"]["dv_free_after_m_s"] > chk["dv_free_after_m_s"]
    row = approval(capsys, led, p1)
    assert row["approval"] == "approved" and row["approval_detail"]["by"] == "A. Okafor"
    assert approval(capsys, led, p2)["approval"] == "none"


def test_approval_goes_stale_only_when_the_check_changes(led, capsys):
    p1, _ = _plans(capsys, led)
    j(capsys, "--ledger", led, "approve", "--plan", p1, "--by", "A. Okafor", "--samples", "2000")
    # A gram of attitude control moves dv free after by far less than the tolerance: still approved.
    j(capsys, "--ledger", led, "use", "--engine", "rcs", "--propellant", "1 g")
    row = approval(capsys, led, p1)
    assert row["approval"] == "approved" and "check_now" in row["approval_detail"]
    # 40 kg gone: the plan's dv free after drops by tens of m/s: stale, with the reason.
    j(capsys, "--ledger", led, "use", "--engine", "rcs", "--propellant", "40 kg")
    row = approval(capsys, led, p1)
    assert row["approval"] == "stale" and "dv free after moved" in row["approval_detail"]["reason"]
    j(capsys, "--ledger", led, "approve", "--plan", p1, "--by", "C. Diaz", "--samples", "2000")
    assert approval(capsys, led, p1)["approval"] == "approved"


def test_reject_needs_a_note_and_bad_decisions_write_nothing(led, capsys):
    p1, p2 = _plans(capsys, led)
    j(capsys, "--ledger", led, "withdraw", "--plan", p2)
    before = raw(led)
    for args in (("reject", "--plan", p1, "--by", "B. Lee"),
                 ("approve", "--plan", "99", "--by", "B. Lee"),
                 ("approve", "--plan", p2, "--by", "B. Lee"),
                 ("approve", "--plan", p1, "--by", "  "),
                 ("approve", "--plan", p1, "--by", "B. Lee", "--confidence", "2")):
        code, _, err = run(capsys, "--ledger", led, *args, "--samples", "2000")
        assert code == 2 and err.count("\n") == 1, err
    assert raw(led) == before
    j(capsys, "--ledger", led, "reject", "--plan", p1, "--by", "B. Lee", "--note", "not needed", "--samples", "2000")
    assert approval(capsys, led, p1)["approval"] == "rejected"
    decision = LedgerFile(led).records()[-1]["seq"]
    code, _, err = run(capsys, "--ledger", led, "correct", "--entry", decision, "--note", "x", "--reason", "y")
    assert code == 2 and "approve or reject" in err


def test_approved_only_counts_only_approved_plans(led, capsys):
    p1, p2 = _plans(capsys, led)
    j(capsys, "--ledger", led, "approve", "--plan", p2, "--by", "A. Okafor", "--samples", "2000")
    j(capsys, "--ledger", led, "reject", "--plan", p1, "--by", "A. Okafor", "--note", "too big", "--samples", "2000")
    every = j(capsys, "--ledger", led, "check", "--engine", "lae", "--dv", "5 m/s", "--samples", "2000")
    approved = j(capsys, "--ledger", led, "check", "--engine", "lae", "--dv", "5 m/s", "--samples", "2000",
                 "--approved-only")
    assert len(every["commitments"]) == 2 and approved["commitments"] == [{"engine": "rcs", "dv_m_s": 4.0}]
    assert approved["approved_only"] and approved["dv_free_after_m_s"] > every["dv_free_after_m_s"]


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_progress_bar_only_on_a_terminal_when_slow():
    quiet = _Terminal()
    with Progress("x", stream=quiet, show_after=60.0) as p:  # expected to finish quickly: no bar
        for i in range(1, 5):
            p(i, 4)
    assert p.bar is None and quiet.getvalue() == ""
    piped = io.StringIO()
    with Progress("x", stream=piped, show_after=0.0) as p:  # slow but not a terminal: no bar
        p(1, 4)
    assert p.bar is None and piped.getvalue() == ""
    tty = _Terminal()
    with Progress("sampling", stream=tty, show_after=0.0) as p:
        p(1, 4)
        assert p.bar is not None
        p(4, 4)
    assert "sampling" in tty.getvalue()
