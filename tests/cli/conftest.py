import os
import subprocess
import sys
import textwrap

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

CRAFT = textwrap.dedent("""\
    craft:
      name: Test craft K-7
      dry_mass: "1800 lb"
    tanks:
      - {id: ox, fluid: MON-3, load: 330, residual: 5}
      - {id: fuel, fluid: MMH, load: "200 kg", residual: "4 kg"}
    engines:
      - {id: lae, isp: "318 s", thrust: "0.44 kN", feeds: {ox: 1.65, fuel: 1}}
      - {id: rcs, isp: 285, thrust: 20, cant: "15 deg", feeds: {ox: 1.65, fuel: 1}}
    reserves:
      - {id: eol, engine: rcs, dv: "10 m/s"}
    """)


def run(*args, env_extra=None, check=False):
    env = dict(os.environ, PYTHONPATH=ROOT)
    env.pop("PROPLEDGER_LEDGER", None)
    env.update(env_extra or {})
    proc = subprocess.run([sys.executable, "-m", "ledger", *args], capture_output=True, text=True, env=env, cwd=ROOT)
    if check:
        assert proc.returncode == 0, proc.stderr
    return proc


@pytest.fixture()
def craft_file(tmp_path):
    p = tmp_path / "craft.yaml"
    p.write_text(CRAFT)
    return str(p)


@pytest.fixture()
def ledger(tmp_path, craft_file):
    path = str(tmp_path / "k7.ledger.json")
    run("--ledger", path, "init", "--craft", craft_file, check=True)
    return path
