"""The fleet at a glance: one summary row per craft, built from each ledger's own status.

A row is a plain function of an opened ledger (``summarize``): the figures are those of
``uncertainty.status_with_confidence``, the same dict ``propledger status --json`` prints, so the fleet
can never disagree with the single-craft view. Where the ledgers come from is a *source*: today a folder
of ledger files (``FolderSource``); a database source only has to list its craft, give each one a
fingerprint that changes with any change to it (its chain head) and open it as a ``Ledger``.

Cold rows are computed in parallel processes; every finished row is kept in a fleet cache keyed by the
craft's fingerprint (for a file: the SHA-256 of the ledger bytes and of its head records, which covers
the chain head and every entry), so a cached row can never answer for a changed ledger (``fleetcache``).
Anything that depends on the clock or on the threshold asked (days since a gauge reading, the attention
reasons) is worked out when the rows are shown (``view``), never cached.
"""
from __future__ import annotations

import hashlib
import os
from concurrent.futures import ProcessPoolExecutor
from typing import Any, Callable, Iterable, Mapping, Sequence

from ..errors import InputError, LedgerError
from ..store.head import head_paths
from .timefmt import iso, now as clock, parse_time

ENV = "PROPLEDGER_FLEET"
WORKERS = 2
"""Processes for the cold rows (issue 15: 2 cores). One per core: each row's Monte Carlo then runs on one
thread (``_worker_init``), so the two levels of parallelism never oversubscribe the cores."""
SERIAL_BELOW = 3
"""Fewer rows to compute than this are done in this process: starting workers would cost more."""
DEFAULT_MARGIN_M_S = 5.0
"""--margin default: a craft whose margin (lowest dv free low bound) is under this needs attention.
Project choice: about a year of routine station keeping or drag make-up for the demo craft."""
STATES = ("ok", "broken", "unreadable")
"""ok: read and intact; broken: read, but its hash chain does not verify (figures replay a changed
ledger); unreadable: could not be opened at all (the row carries the one-line error)."""
SIDE_SUFFIXES = (".confidence-cache.json",)
CACHE_NAME = ".propledger-fleet-cache.json"
SORT_KEYS = ("attention", "name", "margin", "runout", "gauge", "last", "warnings")


# --- where the ledgers are ---------------------------------------------------------------------
class FolderSource:
    """Every ledger file in one folder: ``*.json``, not hidden, not one of propledger's side files.

    A JSON file in the folder that is not a ledger shows as an unreadable row: never hidden."""

    kind = "folder"

    def __init__(self, folder: str):
        folder = os.path.abspath(os.path.expanduser(folder))
        if not os.path.isdir(folder):
            raise InputError(f"--fleet: {folder} is not a folder of ledger files")
        self.folder = folder

    @property
    def label(self) -> str:
        return self.folder

    def members(self) -> list[str]:
        try:
            names = sorted(os.listdir(self.folder))
        except OSError as exc:
            raise InputError(f"--fleet: cannot list {self.folder} ({exc.strerror or exc})") from None
        return [os.path.join(self.folder, n) for n in names
                if n.endswith(".json") and not n.startswith(".") and not n.endswith(SIDE_SUFFIXES)
                and os.path.isfile(os.path.join(self.folder, n))]

    def fingerprint(self, member: str) -> str | None:
        """SHA-256 over the ledger bytes and its head records (what opening it reads); None if unreadable."""
        h = hashlib.sha256()
        for path in (member, *head_paths(member)):
            try:
                with open(path, "rb") as fh:
                    h.update(hashlib.sha256(fh.read()).digest())
            except FileNotFoundError:
                if path == member:
                    return None
                h.update(b"-")
            except OSError:
                return None
        return h.hexdigest()

    def stamp(self, member: str) -> tuple | None:
        """A cheap change signal for the live screen (one stat per file): size, mtime, ctime, inode of the
        ledger and of its head record."""
        out = []
        for path in (member, head_paths(member)[0]):
            try:
                st = os.stat(path)
                out.append((st.st_ino, st.st_size, st.st_mtime_ns, st.st_ctime_ns))
            except OSError:
                out.append(None)
        return tuple(out)

    def cache_base(self) -> str:
        return os.path.join(self.folder, CACHE_NAME)


def resolve_folder(folder: str | None) -> str:
    """--fleet, else PROPLEDGER_FLEET; one clear error when neither is given."""
    chosen = folder or os.environ.get(ENV)
    if not chosen:
        raise InputError(f"fleet: give the folder of ledger files with --fleet DIR, or a database with "
                         f"--fleet postgresql://host/db (or set {ENV})")
    return chosen


# --- one craft ---------------------------------------------------------------------------------
def summarize(ledger) -> dict[str, Any]:
    """The fleet row of an opened ledger (``services.ledger.Ledger`` or anything with ``snapshot()``
    and ``path``): figures from the ledger's own status at the default confidence."""
    from . import uncertainty  # noqa: PLC0415

    snap = ledger.snapshot()
    data = uncertainty.status_with_confidence(snap, with_thrusters=False)  # a row shows no thruster totals
    last_entry = max(snap.entries, key=lambda e: e.seq) if snap.entries else None
    return row_from_status(data, head=snap.head,
                           last_entry_at=iso(last_entry.recorded) if last_entry else snap.meta.get("created"),
                           reserve_engines=[r.engine for r in snap.craft.reserves])


def _engine_margin(engines: Mapping[str, Any], forecast: Mapping[str, Any], reserve_engines: Sequence[str]):
    """The engine whose low bound is the craft's margin: among the engines holding a reserve (else those
    with a routine rate, else all), the least dv free low bound."""
    routine = [r["engine"] for r in forecast.get("engines", [])]
    pool = [e for e in engines if e in reserve_engines] or [e for e in engines if e in routine] or list(engines)
    if not pool:
        return None, None
    best = min(pool, key=lambda e: engines[e].get("dv_free_low_m_s", engines[e]["dv_free_m_s"]))
    e = engines[best]
    return best, e.get("dv_free_low_m_s", e["dv_free_m_s"])


def row_from_status(data: Mapping[str, Any], *, head: Sequence[Any], last_entry_at: str | None,
                    reserve_engines: Sequence[str] = ()) -> dict[str, Any]:
    """A fleet row from a status dict (``status --json``): the figures copied, never recomputed."""
    tanks = {tid: {"usable_kg": t["usable_kg"], "usable_low_kg": t.get("usable_low_kg")}
             for tid, t in data["tanks"].items()}
    engines = {eid: {k: e.get(k) for k in ("dv_available_m_s", "dv_free_m_s", "dv_free_low_m_s", "limiting_tank",
                                           "reserves_met")}
               for eid, e in data["engines"].items()}
    fc = data.get("forecast") or {}
    runout = [{"engine": r["engine"], "dv_per_year_m_s": r["dv_per_year_m_s"], "runs_out": r["runs_out"],
               "years_left": r["years_left"],
               "runs_out_low": (r.get("low") or {}).get("runs_out"),
               "years_left_low": (r.get("low") or {}).get("years_left")} for r in fc.get("engines", [])]
    plans = [{"id": p["id"], "engine": p["engine"], "dv_m_s": p["dv_m_s"], "at": p["at"],
              "approval": p.get("approval", "none"),
              "verdict_now": (p.get("verdict_now") or {}).get("verdict")} for p in data["pending_plans"]]
    gauges = [t["gauge"]["at"] for t in data["tanks"].values() if t.get("gauge")]
    margin_engine, margin = _engine_margin(data["engines"], fc, reserve_engines)
    integrity = data["integrity"]
    return {
        "state": "ok" if integrity == "intact" else "broken",
        "craft": data["craft"], "ledger": data["ledger"], "error": None,
        "entries": data["entries"], "head": {"seq": int(head[0]), "hash": str(head[1])},
        "as_of": data["as_of"], "last_entry_at": last_entry_at,
        "mass_kg": data["mass_kg"], "confidence": data.get("confidence"),
        "usable_kg": sum(t["usable_kg"] for t in tanks.values()),
        "usable_low_kg": (sum(t["usable_low_kg"] for t in tanks.values())
                          if all(t["usable_low_kg"] is not None for t in tanks.values()) else None),
        "tanks": tanks, "engines": engines,
        "margin_engine": margin_engine, "margin_m_s": margin,
        "runout": runout, "pending_plans": plans,
        "warnings": list(data["warnings"]), "warnings_count": len(data["warnings"]),
        "integrity": integrity,
        "last_gauge_at": max(gauges) if gauges else None,
    }


def unreadable_row(path: str, error: str) -> dict[str, Any]:
    """A ledger that could not be opened: a row that says so, with the one-line reason."""
    return {"state": "unreadable", "craft": None, "ledger": path, "error": error, "entries": None, "head": None,
            "as_of": None, "last_entry_at": None, "mass_kg": None, "confidence": None, "usable_kg": None,
            "usable_low_kg": None, "tanks": {}, "engines": {}, "margin_engine": None, "margin_m_s": None,
            "runout": [], "pending_plans": [], "warnings": [], "warnings_count": 0, "integrity": "unreadable",
            "last_gauge_at": None}


def _one_line(exc: BaseException) -> str:
    return "".join(ch if ch.isprintable() else " " for ch in str(exc))


def row_for_path(path: str) -> dict[str, Any]:
    """The row of the ledger file at ``path``; any failure to open it is an unreadable row, never a crash."""
    from ..store.ledgerfile import forget  # noqa: PLC0415
    from .ledger import Ledger  # noqa: PLC0415

    try:
        return _row_for_path(path, Ledger)
    finally:
        forget(path)  # one parsed ledger in memory at a time, however many the fleet holds


def _row_for_path(path: str, Ledger) -> dict[str, Any]:
    """The row with the cyclic collector paused (``bulk.paused_gc``) for all of it, not only for the parse
    and replay: at 20,000 entries the status and confidence pass otherwise ran one collection that walked
    the whole parsed ledger the snapshot still holds (21-28 ms a row, about 3 %). The row's objects are
    freed by reference counting when it ends; a cycle it made waits for the next collection after it."""
    from ..bulk import paused_gc  # noqa: PLC0415

    try:
        with paused_gc():
            row = summarize(Ledger(path))
        row["ledger"] = path  # the name the source lists it under (status gives the resolved path)
        return row
    except LedgerError as exc:
        return unreadable_row(path, _one_line(exc))
    except (OSError, MemoryError, RecursionError, ValueError, KeyError, TypeError, AttributeError) as exc:
        return unreadable_row(path, f"{type(exc).__name__}: {_one_line(exc)}")


ROW_MODULES = ("ledger.services.ledger", "ledger.services.uncertainty", "ledger.services.confcache",
               "ledger.services.forecast", "ledger.services.blowdown", "ledger.store.verifiedmark",
               "ledger.core.montecarlo", "ledger.core.segments", "ledger.core.sampled",
               "ledger.store.ledgerfile", "ledger.services.pulses", "ledger.services.approvalrule",
               "ledger.core.mixture", "numpy.random")
"""What a cold row imports: loaded once before the workers fork, so each worker starts with them (the
first row of a fresh worker otherwise imported the last five itself, numpy's random generators among them)."""
GC_YOUNG = 50_000
"""Allocations between young-generation collections in a worker (Python's default is 700). A row makes
hundreds of thousands of short-lived, cycle-free objects (parsed records, entries); at the default the
collector ran some 40 times a 2,000-entry row (about 3 % of it). Cycles are still collected, less often."""


def _worker_init() -> None:
    import gc  # noqa: PLC0415
    import importlib  # noqa: PLC0415

    from . import uncertainty  # noqa: PLC0415

    for name in ROW_MODULES:  # already there after a fork; imported once per worker otherwise
        importlib.import_module(name)
    uncertainty.WORKERS = 1  # one thread per process: the processes already fill the cores
    gc.set_threshold(GC_YOUNG, *gc.get_threshold()[1:])


def _start_method(context: str | None) -> str | None:
    """fork on Linux when this process runs one thread (workers start with the parent's imports in a few
    milliseconds instead of importing numpy and the row modules again); else the platform's default."""
    import multiprocessing  # noqa: PLC0415
    import sys  # noqa: PLC0415
    import threading  # noqa: PLC0415

    if context:
        return context
    if sys.platform.startswith("linux") and threading.active_count() == 1 \
            and "fork" in multiprocessing.get_all_start_methods():
        return "fork"
    return None


def _largest_first(members: Sequence[str]) -> list[str]:
    """The members by file size, largest first: the long rows start first, so no worker is left alone
    with a big ledger at the end (a member that is not a file counts as empty and keeps its place)."""
    def size(m: str) -> int:
        try:
            return os.path.getsize(m)
        except (OSError, TypeError, ValueError):
            return 0
    return sorted(members, key=lambda m: -size(m))


# --- many craft --------------------------------------------------------------------------------
CHUNK = 1
"""Rows per task handed to a worker. A row costs 50 ms or more and a task's round trip well under a
millisecond, so one row a task: the two workers then finish within about one row of each other, where
chunks of 1/32 of the fleet could leave one worker idle for a whole chunk at the end."""


def compute(paths: Sequence[str], workers: int = WORKERS, context: str | None = None,
            row_fn: Callable[[str], dict[str, Any]] | None = None,
            before: Callable[[str], Any] | None = None) -> list[dict[str, Any]]:
    """Rows for ``paths`` in the same order, in ``workers`` processes when there are enough of them
    (``row_fn``: the source's picklable row function, ``fleetsource.row_function``; files by default).

    ``before(path)`` runs in this process just before ``path`` is handed out (``rows`` takes each cache
    key there: the workers start on the first rows while the later keys are still being read)."""
    row_fn = row_fn or row_for_path
    if not paths:
        return []
    if workers <= 1 or len(paths) < SERIAL_BELOW:
        return [row_fn(p) for p in _announced(paths, before)]
    import importlib  # noqa: PLC0415
    import multiprocessing  # noqa: PLC0415

    method = _start_method(context)
    ctx = multiprocessing.get_context(method) if method else None
    if method == "fork":
        for name in ROW_MODULES:
            importlib.import_module(name)
    with ProcessPoolExecutor(max_workers=workers, mp_context=ctx, initializer=_worker_init) as pool:
        return list(pool.map(row_fn, _announced(paths, before), chunksize=CHUNK))


def _announced(paths: Sequence[str], before: Callable[[str], Any] | None) -> Iterable[str]:
    for p in paths:
        if before is not None:
            before(p)
        yield p


def rows(source: FolderSource, *, workers: int = WORKERS, use_cache: bool = True, context: str | None = None,
         progress: Callable[[int, int], None] | None = None) -> list[dict[str, Any]]:
    """Every craft's row: cached when its fingerprint is unchanged, else computed (and cached)."""
    from . import fleetcache  # noqa: PLC0415

    members = source.members()
    cache = fleetcache.load(source.cache_base()) if use_cache else {}
    prints: dict[str, str | None] = {}
    out: dict[str, dict[str, Any]] = {}
    todo = []
    for m in members:
        hit = cache.get(m)
        if hit is not None:  # a cached row answers only under its key: taken now
            prints[m] = source.fingerprint(m)
            if prints[m] is not None and hit.get("key") == prints[m]:
                out[m] = hit["row"]
                continue
        todo.append(m)
    todo = _largest_first(todo)  # the rows land by member below, whatever order they are computed in
    if progress:
        progress(len(out), len(members))

    def key_first(m: str) -> None:
        """The key of a row to compute, taken just before the row is handed out: never newer than it."""
        if m not in prints:
            prints[m] = source.fingerprint(m)

    for m, row in zip(todo, compute(todo, workers, context, getattr(source, "row_function", None),
                                    before=key_first if use_cache else None)):
        out[m] = row
    if use_cache and todo:
        keep = {m: {"key": prints[m], "row": out[m]} for m in members
                if prints[m] is not None and out[m]["state"] != "unreadable"}
        fleetcache.store(source.cache_base(), keep)
    return [out[m] for m in members]


def stale(source: FolderSource) -> list[str]:
    """The members the cache cannot answer for (their rows would be computed)."""
    from . import fleetcache  # noqa: PLC0415

    cache = fleetcache.load(source.cache_base())
    return [m for m in source.members()
            if (cache.get(m) or {}).get("key") is None or cache[m]["key"] != source.fingerprint(m)]


def refresh(source: FolderSource, member: str) -> dict[str, Any]:
    """One craft's row again (the live screen, after its file changed), in this process, and cached."""
    from . import fleetcache  # noqa: PLC0415

    key = source.fingerprint(member)  # read before the row: it can be older than the row, never newer
    row = (getattr(source, "row_function", None) or row_for_path)(member)
    if key is not None and row["state"] != "unreadable":
        fleetcache.update(source.cache_base(), {member: {"key": key, "row": row}})
    return row


# --- what the shells show ----------------------------------------------------------------------
def attention(row: Mapping[str, Any], margin: float) -> list[str]:
    """Why this craft needs a look now (empty: nothing flagged)."""
    if row["state"] == "unreadable":
        return ["unreadable"]
    out = []
    if row["state"] == "broken":
        out.append("integrity broken")
    if row["warnings_count"]:
        out.append(f"{row['warnings_count']} warning(s)")
    waiting = [p for p in row["pending_plans"] if p["approval"] in ("none", "stale")]
    if waiting:
        out.append(f"{len(waiting)} plan(s) undecided")
    if row["margin_m_s"] is not None and row["margin_m_s"] < margin:
        out.append(f"margin under {margin:g} m/s")
    return out


def _days(then: str | None, now: float) -> float | None:
    return None if not then else max(0.0, (now - parse_time(then, "gauge time")) / 86400.0)


def view(all_rows: Iterable[Mapping[str, Any]], *, margin: float = DEFAULT_MARGIN_M_S, now: float | None = None,
         sort: str = "attention", only_attention: bool = False) -> list[dict[str, Any]]:
    """Rows with the clock-dependent fields (days since the last gauge reading) and attention reasons,
    sorted and filtered as asked."""
    if sort not in SORT_KEYS:
        raise InputError(f"--sort: expected one of {', '.join(SORT_KEYS)}, got {sort!r}")
    t = clock() if now is None else now
    out = []
    for r in all_rows:
        row = dict(r)
        row["days_since_gauge"] = _days(row.get("last_gauge_at"), t)
        row["attention"] = attention(row, margin)
        if only_attention and not row["attention"]:
            continue
        out.append(row)
    out.sort(key=SORTERS[sort])
    return out


def _name(r) -> str:
    return (r.get("craft") or os.path.basename(r["ledger"])).lower()


def _margin_key(r) -> float:
    return r["margin_m_s"] if r["margin_m_s"] is not None else float("-inf")


def _rank(r) -> int:
    """0: unreadable or broken chain, 1: something flagged, 2: nothing flagged."""
    if r["state"] != "ok":
        return 0
    return 1 if r["attention"] else 2


def _runout_key(r) -> str:
    dates = [x["runs_out_low"] or x["runs_out"] for x in r.get("runout", []) if x["runs_out_low"] or x["runs_out"]]
    return min(dates) if dates else "9999"


SORTERS: dict[str, Callable[[Mapping[str, Any]], Any]] = {
    "attention": lambda r: (_rank(r), -len(r["attention"]), _margin_key(r), _name(r)),
    "name": lambda r: (_name(r), r["ledger"]),
    "margin": lambda r: (_margin_key(r), _name(r)),
    "runout": lambda r: (_runout_key(r), _name(r)),
    "gauge": lambda r: (-(r["days_since_gauge"] if r["days_since_gauge"] is not None else float("inf")), _name(r)),
    "last": lambda r: ("~" if not r["last_entry_at"] else _neg(r["last_entry_at"]), _name(r)),
    "warnings": lambda r: (-r["warnings_count"], _name(r)),
}


def _neg(text: str) -> str:
    """Latest first for ISO text: invert each digit."""
    return "".join(chr(ord("9") - ord(c) + ord("0")) if c.isdigit() else c for c in text)


def summary(rows_shown: Sequence[Mapping[str, Any]]) -> dict[str, int]:
    return {"craft": len(rows_shown), "attention": sum(1 for r in rows_shown if r["attention"]),
            "broken": sum(1 for r in rows_shown if r["state"] == "broken"),
            "unreadable": sum(1 for r in rows_shown if r["state"] == "unreadable")}


__all__ = ["FolderSource", "summarize", "row_from_status", "row_for_path", "compute", "rows", "view",
           "attention", "resolve_folder", "SORT_KEYS", "STATES"]
