"""gauge --json matches its schema in tests/cli/schemas.py and docs/json.md (issue 11 point 6), checked with
the jsonschema package (JSON Schema draft 2020-12) through real subprocesses, for both gauging methods."""
from __future__ import annotations

import json
import math

import jsonschema
import pytest

from tests.cli import schemas
from tests.cli.conftest import run
from tests.cli.test_gauging_cli import gledger  # noqa: F401 - the gauging craft's ledger fixture


def _validate(doc):
    jsonschema.Draft202012Validator(schemas.GAUGE, format_checker=jsonschema.FormatChecker()).validate(doc)


@pytest.mark.parametrize("args,method,recorded", [
    (("--tank", "hz", "--pressure", "10 bar", "--temperature", "30 degC", "--dry-run"), "blowdown PVT", False),
    (("--tank", "xe", "--pressure", "8.4 MPa", "--temperature", "30 degC", "--by", "P. Ilves"), "gas density", True),
])
def test_gauge_json_matches_its_schema(gledger, args, method, recorded):  # noqa: F811
    proc = run("--ledger", gledger, "gauge", *args, "--json")
    assert proc.returncode in (0, 1), proc.stderr  # 1: beyond 3 sigma, the document is the same
    out = json.loads(proc.stdout)
    _validate(out)
    assert out["method"] == method and (out["id"] is not None) == recorded and out["dry_run"] is not recorded
    assert (proc.returncode == 1) == out["flagged"]
    # the reconciliation's figures hang together: independent estimates combine in quadrature
    # (JCGM 100:2008, Guide to the expression of uncertainty in measurement, eq. 10, uncorrelated inputs)
    assert out["difference_kg"] == pytest.approx(out["propellant_kg"] - out["bookkeeping_kg"], rel=1e-12)
    assert out["combined_sigma_kg"] == pytest.approx(math.hypot(out["sigma_kg"], out["bookkeeping_sigma_kg"]),
                                                     rel=1e-9)
    assert out["difference_sigma"] == pytest.approx(out["difference_kg"] / out["combined_sigma_kg"], rel=1e-9)
    assert out["flagged"] == (abs(out["difference_sigma"]) > out["limit_sigma"])


def test_schema_rejects_a_missing_or_mistyped_key(gledger):  # noqa: F811
    out = json.loads(run("--ledger", gledger, "gauge", "--tank", "hz", "--pressure", "10 bar", "--temperature",
                         "30 degC", "--dry-run", "--json").stdout)
    for broken in ({k: v for k, v in out.items() if k != "sigma_kg"}, {**out, "flagged": "no"}):
        with pytest.raises(jsonschema.ValidationError):
            _validate(broken)
