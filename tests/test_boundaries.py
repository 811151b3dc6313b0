"""Architecture checks: the core stays pure, and the read-only command line stays light.

Checked in fresh subprocesses, since the test process itself imports everything.
"""
import json
import os
import subprocess
import sys
import textwrap

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
HEAVY_FOR_CORE = ["textual", "rich", "tinydb", "pint", "CoolProp", "matplotlib", "yaml", "orjson"]


def loaded_after(code: str) -> set[str]:
    script = textwrap.dedent(code) + "\nimport sys, json; print(json.dumps(sorted(sys.modules)))\n"
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, cwd=ROOT, check=True,
                         env=dict(os.environ, PYTHONPATH=ROOT))
    return set(json.loads(out.stdout.strip().splitlines()[-1]))


def test_core_imports_no_shell_library():
    mods = loaded_after("""
        import pkgutil, importlib, ledger.core
        for m in pkgutil.iter_modules(ledger.core.__path__):
            importlib.import_module('ledger.core.' + m.name)
    """)
    leaked = [name for name in HEAVY_FOR_CORE if name in mods]
    assert leaked == []


def test_status_path_needs_no_console_units_or_real_gas(tmp_path):
    craft = tmp_path / "c.yaml"
    craft.write_text("craft: {name: b, dry_mass: 10}\ntanks: [{id: t, fluid: hydrazine, load: 5}]\n"
                     "engines: [{id: e, isp: 220, thrust: 1, feeds: {t: 1}}]\n")
    ledger = tmp_path / "l.json"
    subprocess.run([sys.executable, "-m", "ledger", "--ledger", str(ledger), "init", "--craft", str(craft)],
                   cwd=ROOT, check=True, capture_output=True, env=dict(os.environ, PYTHONPATH=ROOT))
    mods = loaded_after(f"""
        import io, contextlib
        from ledger.cli import main
        with contextlib.redirect_stdout(io.StringIO()):
            main(['--ledger', {str(ledger)!r}, 'status'])
    """)
    assert [m for m in ("textual", "pint", "CoolProp", "matplotlib", "yaml") if m in mods] == []


def test_a_cached_status_reads_without_sampler_lock_or_tinydb(tmp_path):
    # Reads take no lock and TinyDB is only needed to write; once the Monte Carlo behind the low bounds is
    # cached for this ledger, a status does not even import the sampler (kept off the quick path).
    craft = tmp_path / "c.yaml"
    craft.write_text("craft: {name: b, dry_mass: 10}\ntanks: [{id: t, fluid: hydrazine, load: 5}]\n"
                     "engines: [{id: e, isp: 220, thrust: 1, feeds: {t: 1}}]\n")
    ledger = tmp_path / "l.json"
    env = dict(os.environ, PYTHONPATH=ROOT)
    for argv in (["init", "--craft", str(craft)], ["burn", "--engine", "e", "--dv", "1"], ["status", "--json"]):
        subprocess.run([sys.executable, "-m", "ledger", "--ledger", str(ledger), *argv], cwd=ROOT, check=True,
                       capture_output=True, env=env)
    mods = loaded_after(f"""
        import io, contextlib
        from ledger.cli import main
        with contextlib.redirect_stdout(io.StringIO()):
            main(['--ledger', {str(ledger)!r}, 'status', '--json'])
    """)
    assert [m for m in ("ledger.core.montecarlo", "ledger.core.sampled", "tinydb", "filelock") if m in mods] == []


BLOWDOWN_CRAFT = """craft: {name: b, dry_mass: 100 kg}
tanks:
  - {id: t, fluid: hydrazine, load: 50 kg, volume: 70 L, pressurant: {gas: helium, pressure: 22 bar, temperature: 20 degC}}
engines:
  - id: e
    performance: {pressure: [5.5 bar, 22 bar], thrust: [0.3 N, 1.0 N], isp: [205 s, 231 s]}
    feeds: {t: 1}
"""


def test_a_cached_status_loads_only_its_own_command_modules(tmp_path):
    # A status registers the command modules up to the one that holds it (ledger.cli.build_parser), so the
    # fleet's process pool, the backup code and the other commands' modules stay unloaded; the blowdown
    # replay finds distinct values without np.unique, which imports numpy's masked arrays (numpy 2).
    craft = tmp_path / "c.yaml"
    craft.write_text(BLOWDOWN_CRAFT)
    ledger = tmp_path / "l.json"
    env = dict(os.environ, PYTHONPATH=ROOT)
    for argv in (["init", "--craft", str(craft)], ["use", "--engine", "e", "--duration", "60 s"],
                 ["burn", "--engine", "e", "--dv", "0.5"], ["status", "--json"]):
        subprocess.run([sys.executable, "-m", "ledger", "--ledger", str(ledger), *argv], cwd=ROOT, check=True,
                       capture_output=True, env=env)
    for argv in (["status", "--json"], ["status"]):
        mods = loaded_after(f"""
            import io, contextlib
            from ledger.cli import main
            with contextlib.redirect_stdout(io.StringIO()):
                assert main(['--ledger', {str(ledger)!r}, *{argv!r}]) == 0
        """)
        off = ("ledger.services.fleet", "ledger.cli.fleet", "ledger.cli.demo", "ledger.cli.integrity",
               "ledger.store.backup", "concurrent.futures", "multiprocessing", "numpy.ma")
        assert [m for m in off if m in mods] == [], argv
