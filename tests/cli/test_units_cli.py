"""Unit spellings and bare numbers through the real entry point (issue 11, point 9).

Reference conversions, each from its defining document, never from pint or the project:
- 1 lb = 0.45359237 kg exactly (International Yard and Pound Agreement, 1959; NIST SP 811 (2008), Appendix B.8,
  "pound (avoirdupois) (lb)": 4.535 924 E-01 kg, exact value given in its footnote).
- 1 psi = 1 lbf/in^2 with 1 lbf = 0.45359237 kg x 9.80665 m/s^2 (standard gravity, 3rd CGPM 1901) and
  1 in = 0.0254 m exactly (same 1959 agreement): 6894.757293168 Pa (NIST SP 811 (2008), Appendix B.8,
  "pound-force per square inch (psi)": 6.894 757 E+03 Pa).
- T/K = t/degC + 273.15 (SI Brochure, 9th edition (2019), section 2.3.1); T/K = (t/degF + 459.67) x 5/9
  (NIST SP 811 (2008), Appendix B.9, "degree Fahrenheit").
"""
import json
import textwrap

import pytest

from tests.cli.conftest import run

LB_KG = 0.45359237
PSI_PA = LB_KG * 9.80665 / 0.0254 ** 2
SP811_PSI_PA = 6.894757e3  # the table value to its printed 7 digits

GAUGE_CRAFT = textwrap.dedent("""\
    craft: {name: Test units craft, dry_mass: "300 kg"}
    tanks:
      - {id: hz, fluid: hydrazine, load: "60 kg", volume: "80 L",
         pressurant: {gas: helium, pressure: "22.014 bar", temperature: "20 degC"}}
    engines:
      - {id: thr, isp: "220 s", thrust: "22 N", feeds: {hz: 1}}
    """)


def last_entry(ledger):
    return json.loads(run("--ledger", ledger, "log", "--json", check=True).stdout)[-1]


def test_reference_psi_matches_the_sp811_table():
    assert PSI_PA == pytest.approx(6894.757293168, rel=1e-12)  # NIST SP 811 (2008) B.8, exact definitions
    assert PSI_PA == pytest.approx(SP811_PSI_PA, abs=0.5e-3)


def test_burn_in_lbm_is_the_pound(ledger):
    run("--ledger", ledger, "burn", "--engine", "lae", "--propellant", "3 lbm", "--at", "2026-01-01T00:00Z",
        check=True)
    assert last_entry(ledger)["data"]["propellant_kg"] == pytest.approx(3 * LB_KG, rel=1e-12)


@pytest.fixture()
def gledger(tmp_path):
    craft = tmp_path / "units-craft.yaml"
    craft.write_text(GAUGE_CRAFT)
    path = str(tmp_path / "u.ledger.json")
    run("--ledger", path, "init", "--craft", str(craft), check=True)
    return path


def gauge(path, pressure, temperature, *extra):
    return run("--ledger", path, "gauge", "--tank", "hz", "--pressure", pressure, "--temperature", temperature,
               "--dry-run", "--json", *extra)


@pytest.mark.parametrize("pressure", ["100 psia", "100 psig", "100 psi"])
@pytest.mark.parametrize("temperature,kelvin", [("20 C", 293.15), ("20 degC", 293.15), ("20 °C", 293.15),
                                                ("68 degF", (68 + 459.67) * 5 / 9), ("68 F", (68 + 459.67) * 5 / 9),
                                                ("293.15 K", 293.15)])
def test_gauge_reads_psi_spellings_and_temperatures(gledger, pressure, temperature, kelvin):
    proc = gauge(gledger, pressure, temperature)
    assert proc.returncode in (0, 1), proc.stderr  # 1 = beyond 3 sigma: still a reading, and a dry run
    out = json.loads(proc.stdout)
    assert out["pressure_pa"] == pytest.approx(100 * PSI_PA, rel=1e-12)
    assert out["temperature_k"] == pytest.approx(kelvin, rel=1e-12)
    assert out["dry_run"] is True


def test_temperature_sigma_in_c_is_a_difference(gledger):
    out = json.loads(gauge(gledger, "100 psia", "20 C", "--temperature-sigma", "0.5 C").stdout)
    assert out["temperature_sigma_k"] == pytest.approx(0.5)  # a spread of 0.5 degC is 0.5 K (SI Brochure 2.3.1)


def test_c_outside_a_temperature_is_refused_with_a_hint(ledger):
    before = open(ledger).read()
    proc = run("--ledger", ledger, "burn", "--engine", "lae", "--propellant", "3 C")
    assert proc.returncode == 2 and proc.stderr.count("propledger:") == 1
    assert "--propellant" in proc.stderr and "degC" in proc.stderr and len(proc.stderr.strip().splitlines()) == 1
    assert open(ledger).read() == before


def test_pressure_error_says_gauge_needs_the_ambient(gledger):
    proc = gauge(gledger, "100 psx", "20 C")
    assert proc.returncode == 2 and "psig" in proc.stderr and "ambient" in proc.stderr


def test_bare_numbers_are_in_the_base_unit(ledger, gledger):
    """The README's rule, one for both shells: a bare number is in the base unit (kg, s, m/s, Pa, K)."""
    run("--ledger", ledger, "burn", "--engine", "lae", "--propellant", "1.5", "--at", "2026-01-01T00:00Z",
        check=True)
    assert last_entry(ledger)["data"]["propellant_kg"] == 1.5
    run("--ledger", ledger, "plan", "--engine", "lae", "--dv", "2.5", "--at", "2027-01-01T00:00Z", check=True)
    assert last_entry(ledger)["data"]["dv_m_s"] == 2.5
    out = json.loads(gauge(gledger, "689475.7", "293.15").stdout)
    assert out["pressure_pa"] == 689475.7 and out["temperature_k"] == 293.15
