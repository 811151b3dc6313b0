"""Manoeuvres from CCSDS Orbit Data Messages (CCSDS 502.0-B-3): OPM maneuver parameters and OCM
maneuver blocks, KVN or XML, read with ccsds-ndm-py (imported here only, when a message is read).

Mapping (docs/ccsds.md): MAN_BASIS CANDIDATE, PLANNED or ANTICIPATED is a plan; TELEMETRY or DETERMINED
an executed burn, linked to the pending plan imported with the same MAN_ID; SIMULATED and OTHER are left
out with a warning. |DV| is the magnitude of DV_X/Y/Z (MAN_DV_1..3 in an OPM), km/s in the standard,
stored in m/s. DELTA_MASS is kept in the entry's source and compared with the ledger's own propellant
figure. MAN_DEVICE_ID maps to an engine through the craft file's ``import: devices``. DV_MAG_SIGMA (%)
becomes the burn's sigma in m/s.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from datetime import datetime, timezone
from typing import Any, Callable

from ..core.entries import BURN, PLAN
from ..errors import InputError
from .imports import Candidate, Read, base_source, read_bytes, text_of
from .importconfig import engine_for
from .timefmt import iso

PLAN_BASES = ("CANDIDATE", "PLANNED", "ANTICIPATED")
EXECUTED_BASES = ("TELEMETRY", "DETERMINED")
SKIPPED_BASES = ("SIMULATED", "OTHER")
TIME_SYSTEMS = ("UTC", "TAI", "TT", "GPS")
"""UTC is taken as it is; TAI, TT and GPS are converted to UTC with astropy.time (GPS = TAI - 19 s).
Others (UT1, TDB, MET, SCLK, ...) need data the ledger does not have and are refused."""
KM_S = 1000.0
UNITS = {"DV_X": "km/s", "DV_Y": "km/s", "DV_Z": "km/s", "DELTA_MASS": "kg", "MAN_DURA": "s", "DV_MAG_SIGMA": "%"}
"""Mandatory units of the OCM maneuver elements read here (CCSDS 502.0-B-3 table 6-8); MAN_UNITS may only
repeat them."""
STANDARD = "CCSDS 502.0-B-3"


@dataclass
class Manoeuvre:
    """One manoeuvre as the message gives it, times in UTC POSIX seconds, DV in km/s as written."""

    man_id: str
    basis: str
    device: str | None
    at: float
    line: int | None
    dv_km_s: tuple[float, float, float] | None = None
    duration_s: float | None = None
    delta_mass_kg: float | None = None
    sigma_m_s: float | None = None
    sigma_pct: float | None = None
    purpose: str | None = None
    elements: tuple[str, ...] = ()

    @property
    def dv_m_s(self) -> float | None:
        """|DV| in m/s: the magnitude of the message's components, km/s times 1000."""
        return None if self.dv_km_s is None else math.sqrt(sum(c * c for c in self.dv_km_s)) * KM_S


@dataclass
class Message:
    format: str                  # opm | ocm
    encoding: str                # kvn | xml
    version: str
    message_key: str             # MESSAGE_ID, else CREATION_DATE
    message: str
    time_system: str
    object_name: str | None
    manoeuvres: list[Manoeuvre]
    wet_mass_kg: float | None = None
    dry_mass_kg: float | None = None
    notes: list[str] = field(default_factory=list)


# --- text positions for error messages -----------------------------------------------------------
def _line_of(text: str, needle: str, start: int = 1) -> int | None:
    """1-based number of the first line at or after ``start`` containing ``needle``."""
    for n, line in enumerate(text.splitlines()[start - 1:], start):
        if needle in line:
            return n
    return None


def _nth_line(text: str, needle: str, k: int) -> int | None:
    seen = 0
    for n, line in enumerate(text.splitlines(), 1):
        if needle in line:
            if seen == k:
                return n
            seen += 1
    return None


def _at(path: str, line: int | None, keyword: str | None = None) -> str:
    where = f"{path} line {line}" if line else path
    return f"{where}: {keyword}" if keyword else where


def _library_error(path: str, text: str, exc: Exception) -> InputError:
    """The library's complaint on one line, with the line it points at when the file shows it."""
    msg = " ".join(str(exc).split())
    m = re.search(r"at line (\d+)", msg)
    line = int(m.group(1)) if m else None
    if line is None and not msg.startswith("Missing"):  # a missing key has no line to point at
        for token in re.findall(r"'([^']+)'|\b([A-Z][A-Z0-9_]{3,})\b", msg):
            tok = token[0] or token[1]
            if tok in ("KVN", "CCSDS", "XML"):
                continue
            line = _line_of(text, f"[{tok}]") or _line_of(text, f"= {tok}") or _line_of(text, tok)
            if line:
                break
    return InputError(f"{_at(path, line)}: not a usable {STANDARD} message: {msg}")


# --- epochs --------------------------------------------------------------------------------------
_DOY = re.compile(r"^(\d{4})-(\d{3})T(\d{2}):(\d{2}):(\d{2}(?:\.\d+)?)$")


def _calendar(text: str, where: str) -> datetime:
    s = text.strip().rstrip("Z")
    m = _DOY.match(s)
    try:
        if m:
            y, doy, hh, mm, ss = m.groups()
            sec = float(ss)
            base = datetime.strptime(f"{y}-{doy}T{hh}:{mm}:00", "%Y-%jT%H:%M:%S")
            return base.replace(second=int(sec), microsecond=round((sec % 1) * 1e6) % 1_000_000)
        head, dot, frac = s.partition(".")
        dt = datetime.fromisoformat(head)
        return dt.replace(microsecond=round(float("0." + frac) * 1e6) % 1_000_000) if dot and frac else dt
    except ValueError:
        raise InputError(f"{where}: expected an epoch like 2021-06-03T09:00:34.1 or 2021-154T09:00:34, "
                         f"got {text!r}") from None


def utc_seconds(text: str, time_system: str, where: str) -> float:
    """An epoch of the message's TIME_SYSTEM as UTC POSIX seconds (astropy.time for TAI, TT, GPS)."""
    dt = _calendar(text, where)
    if time_system == "UTC":
        return dt.replace(tzinfo=timezone.utc).timestamp()
    from astropy.time import Time, TimeDelta  # noqa: PLC0415 - only for a message not in UTC
    from astropy.utils import iers  # noqa: PLC0415

    iers.conf.auto_download = False  # the leap-second table astropy ships; never the network
    stamp = dt.strftime("%Y-%m-%dT%H:%M:%S.%f")
    if time_system == "GPS":  # GPS time runs 19 s behind TAI, no leap seconds (IS-GPS-200)
        t = Time(stamp, format="isot", scale="tai") + TimeDelta(19.0, format="sec")
    else:
        t = Time(stamp, format="isot", scale=time_system.lower())
    return t.utc.to_datetime().replace(tzinfo=timezone.utc).timestamp()


def _time_system(path: str, text: str, value: Any) -> str:
    ts = str(value or "").strip().upper()
    if ts not in TIME_SYSTEMS:
        raise InputError(f"{_at(path, _line_of(text, 'TIME_SYSTEM'), 'TIME_SYSTEM')} = {value}: expected UTC, "
                         "or TAI, TT or GPS (converted to UTC with astropy); convert the message first")
    return ts


# --- reading -------------------------------------------------------------------------------------
_KVN_DELTA_MASS = re.compile(r"^\s*(MAN_DELTA_MASS)\s*=\s*\+?(\d+\.?\d*(?:[eE][-+]?\d+)?)")


def _positive_mass(path: str, text: str) -> None:
    """An OPM's positive MAN_DELTA_MASS, named by line before the library refuses it in its own words."""
    for n, line in enumerate(text.splitlines(), 1):
        m = _KVN_DELTA_MASS.match(line)
        if m and float(m.group(2)) > 0:
            raise InputError(f"{path} line {n}: {m.group(1)} = {m.group(2)} kg is positive; expected a negative "
                             "mass change (propellant spent)")


def _parse(path: str, text: str):
    _positive_mass(path, text)
    try:
        import ccsds_ndm  # noqa: PLC0415 - only when a message is imported
    except ImportError:  # pragma: no cover - a dependency of the package
        raise InputError("reading CCSDS messages needs ccsds-ndm-py (pip install ccsds-ndm-py)") from None
    try:
        return ccsds_ndm.from_str(text)
    except (ValueError, RuntimeError, ccsds_ndm.NdmError) as exc:
        raise _library_error(path, text, exc) from None


def _message_id(path: str, text: str, header) -> tuple[str, str]:
    if getattr(header, "message_id", None):
        return "MESSAGE_ID", str(header.message_id)
    if getattr(header, "creation_date", None):
        return "CREATION_DATE", str(header.creation_date)
    raise InputError(f"{path}: CREATION_DATE: missing; expected the message's creation date ({STANDARD} 3.2)")


def read_message(path: str, text: str, expected: str | None = None, *, opm_executed: bool = False) -> Message:
    """The manoeuvres of an OPM or OCM as plain values; InputError on anything the mapping cannot use."""
    obj = _parse(path, text)
    kind = type(obj).__name__.lower()
    if kind not in ("opm", "ocm"):
        raise InputError(f"{path}: a CCSDS {kind.upper()}, not an OPM or OCM; expected an orbit parameter or "
                         "orbit comprehensive message with manoeuvres")
    if expected and expected != kind:
        raise InputError(f"{path}: an {kind.upper()}, not an {expected.upper()} (--format {expected})")
    encoding = "xml" if text.lstrip().startswith("<") else "kvn"
    key, msg = _message_id(path, text, obj.header)
    version = str(obj.version)
    if kind == "opm":
        return _opm(path, text, obj, encoding, version, key, msg, opm_executed)
    return _ocm(path, text, obj, encoding, version, key, msg)


def _opm(path, text, obj, encoding, version, key, msg, executed) -> Message:
    seg = obj.segment
    ts = _time_system(path, text, seg.metadata.time_system)
    mans = []
    basis = "DETERMINED" if executed else "PLANNED"
    for k, m in enumerate(seg.data.maneuver_parameters or []):
        line = _nth_line(text, "MAN_EPOCH_IGNITION", k)
        where = _at(path, line, "MAN_EPOCH_IGNITION")
        at = utc_seconds(str(m.man_epoch_ignition), ts, where)
        dm = m.man_delta_mass
        if dm is not None and dm > 0:
            raise InputError(f"{_at(path, _nth_line(text, 'MAN_DELTA_MASS', k), 'MAN_DELTA_MASS')} = {dm:g} kg is "
                             "positive; expected a negative mass change (propellant spent)")
        mans.append(Manoeuvre(man_id=f"OPM {iso(at)}", basis=basis, device=None, at=at, line=line,
                              dv_km_s=(float(m.man_dv_1), float(m.man_dv_2), float(m.man_dv_3)),
                              duration_s=float(m.man_duration) if m.man_duration is not None else None,
                              delta_mass_kg=float(dm) if dm is not None else None))
    sc = seg.data.spacecraft_parameters
    return Message("opm", encoding, version, key, msg, ts, seg.metadata.object_name, mans,
                   wet_mass_kg=float(sc.mass) if sc is not None and sc.mass is not None else None)


def _kvn_keyword(text: str, block: int, keyword: str) -> str | None:
    """A keyword's value in the ``block``-th MAN_START..MAN_STOP of a KVN message, with the lines a
    printed message wraps it over joined back (the standard's figures wrap MAN_COMPOSITION; a
    continuation line has no '=' and starts with a letter)."""
    lines = text.splitlines()
    start = _nth_line(text, "MAN_START", block)
    if start is None:
        return None
    for i in range(start, len(lines)):
        line = lines[i].strip()
        if line.startswith("MAN_STOP"):
            return None
        key, eq, value = line.partition("=")
        if eq and key.strip() == keyword:
            parts = [value.strip().replace("<cont.>", "").strip()]
            for nxt in lines[i + 1:]:
                nxt = nxt.strip()
                if "=" in nxt or not nxt[:1].isalpha() or nxt.startswith(("COMMENT", "MAN_STOP")):
                    break
                parts.append(nxt.replace("<cont.>", "").strip())
            return " ".join(p.rstrip(",") + ("," if p.endswith(",") else "") for p in parts if p)
    return None


def _elements(composition: str) -> list[str]:
    return [e for e in re.split(r"[,\s]+", composition.strip()) if e]


def _units(path: str, line: int | None, man_units: str | None, elements: list[str]) -> None:
    """MAN_UNITS, when given, must repeat the mandatory units of the elements the ledger reads."""
    if not man_units:
        return
    units = [u.strip() for u in str(man_units).strip().strip("[]").split(",")]
    after = [e for e in elements if not e.startswith("TIME_")]
    if len(units) == len(elements) and len(units) == len(after) + 1:
        units = units[1:]  # a unit given for the time tag too (as annex G figure G-17 does): 'n/a'
    if len(units) != len(after):
        raise InputError(f"{_at(path, line, 'MAN_UNITS')}: {len(units)} units for {len(after)} elements of "
                         f"MAN_COMPOSITION; expected one unit per element after the time tag")
    for element, unit in zip(after, units):
        want = UNITS.get(element)
        if want is not None and unit.replace(" ", "") != want:
            raise InputError(f"{_at(path, line, 'MAN_UNITS')}: '{unit}' for {element}; expected {want} "
                             f"({STANDARD} table 6-8)")


def _number(text: str, element: str, where: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{where}: {element} = {text!r}; expected a number") from None
    if not math.isfinite(value):
        raise InputError(f"{where}: {element} = {text!r}; expected a finite number")
    return value


def _ocm(path, text, obj, encoding, version, key, msg) -> Message:
    seg = obj.segment
    md = seg.metadata
    ts = _time_system(path, text, md.time_system)
    tzero = None
    mans = []
    for k, m in enumerate(seg.data.man or []):
        start = _nth_line(text, "MAN_START", k) if encoding == "kvn" else None
        id_line = _line_of(text, str(m.man_id), start or 1)
        where = _at(path, id_line, f"MAN_ID {m.man_id}")
        basis = str(m.man_basis or "").strip().upper()
        if not basis:
            raise InputError(f"{where}: MAN_BASIS missing; expected {', '.join(PLAN_BASES)} (a plan) or "
                             f"{', '.join(EXECUTED_BASES)} (an executed burn)")
        composition, man_units = m.man_composition, m.man_units
        if encoding == "kvn":  # the text itself, with wrapped lines joined (the library keeps the first line)
            composition = _kvn_keyword(text, k, "MAN_COMPOSITION") or composition
            man_units = _kvn_keyword(text, k, "MAN_UNITS") or man_units
        elements = _elements(str(composition))
        _units(path, _line_of(text, "MAN_UNITS", id_line or 1), man_units, elements)
        times = [e for e in elements if e in ("TIME_ABSOLUTE", "TIME_RELATIVE")]
        if len(times) != 1 or elements[0] != times[0]:
            raise InputError(f"{_at(path, _line_of(text, 'MAN_COMPOSITION', id_line or 1), 'MAN_COMPOSITION')}: "
                             "expected one time tag first (TIME_ABSOLUTE or TIME_RELATIVE)")
        cols = elements[1:]
        total = [0.0, 0.0, 0.0]
        has_dv = all(c in cols for c in ("DV_X", "DV_Y", "DV_Z"))
        if any(c in cols for c in ("DV_X", "DV_Y", "DV_Z")) and not has_dv:
            raise InputError(f"{where}: MAN_COMPOSITION has only part of DV_X, DV_Y, DV_Z; expected all three")
        duration = dmass = None
        var = 0.0
        has_sigma = False
        first_at = None
        for line_obj in m.man_lines:
            data_line = _line_of(text, str(line_obj.epoch).strip(), id_line or 1) if encoding == "kvn" else id_line
            lw = _at(path, data_line, f"MAN_ID {m.man_id}")
            values = list(line_obj.values)
            if len(values) != len(cols):
                raise InputError(f"{lw}: {len(values)} values for {len(cols)} elements of MAN_COMPOSITION; "
                                 "expected one value per element")
            row = dict(zip(cols, values))
            if times[0] == "TIME_ABSOLUTE":
                at = utc_seconds(str(line_obj.epoch), ts, lw)
            else:
                if tzero is None:
                    tzero = utc_seconds(str(md.epoch_tzero), ts, _at(path, _line_of(text, "EPOCH_TZERO"), "EPOCH_TZERO"))
                at = tzero + _number(str(line_obj.epoch), "TIME_RELATIVE", lw)
            first_at = at if first_at is None else min(first_at, at)
            dv_line = None
            if has_dv:
                dv_line = [_number(row[c], c, lw) for c in ("DV_X", "DV_Y", "DV_Z")]
                total = [a + b for a, b in zip(total, dv_line)]
            if "MAN_DURA" in row:
                d = _number(row["MAN_DURA"], "MAN_DURA", lw)
                if d < 0:
                    raise InputError(f"{lw}: MAN_DURA = {d:g} s; expected a duration of zero or more")
                duration = (duration or 0.0) + d
            if "DELTA_MASS" in row:
                dm = _number(row["DELTA_MASS"], "DELTA_MASS", lw)
                if dm > 0:
                    raise InputError(f"{lw}: DELTA_MASS = {dm:g} kg is positive; expected a negative mass change "
                                     "(propellant spent)")
                dmass = (dmass or 0.0) + dm
            if "DV_MAG_SIGMA" in row and dv_line is not None:
                pct = _number(row["DV_MAG_SIGMA"], "DV_MAG_SIGMA", lw)
                if pct < 0:
                    raise InputError(f"{lw}: DV_MAG_SIGMA = {pct:g} %; expected a percentage of zero or more")
                var += (pct / 100.0 * math.sqrt(sum(c * c for c in dv_line)) * KM_S) ** 2
                has_sigma = True
        if first_at is None:
            raise InputError(f"{where}: no maneuver data lines; expected at least one line after MAN_COMPOSITION")
        dv = tuple(total) if has_dv else None
        man = Manoeuvre(man_id=str(m.man_id), basis=basis, device=str(m.man_device_id), at=first_at, line=id_line,
                        dv_km_s=dv, duration_s=duration, delta_mass_kg=dmass,
                        sigma_m_s=math.sqrt(var) if has_sigma else None, purpose=m.man_purpose,
                        elements=tuple(cols))
        if has_sigma and man.dv_m_s:
            man.sigma_pct = 100.0 * man.sigma_m_s / man.dv_m_s
        mans.append(man)
    phys = seg.data.phys
    wet = getattr(phys, "wet_mass", None) if phys is not None else None
    dry = getattr(phys, "dry_mass", None) if phys is not None else None
    if phys is None and encoding == "xml":
        wet, dry = _xml_masses(text)
    return Message("ocm", encoding, version, key, msg, ts, md.object_name, mans, wet_mass_kg=wet, dry_mass_kg=dry)


def _xml_masses(text: str) -> tuple[float | None, float | None]:
    """WET_MASS and DRY_MASS of an XML OCM's <phys> block, read with the standard library: ccsds-ndm-py
    0.0.9 drops that block when it reads XML (it reads it from KVN)."""
    import xml.etree.ElementTree as ET  # noqa: PLC0415, S405 - a message the library has already parsed

    try:
        root = ET.fromstring(text)
    except ET.ParseError:
        return None, None
    out = []
    for tag in ("WET_MASS", "DRY_MASS"):
        node = root.find(f".//phys/{tag}")
        try:
            out.append(float(node.text) if node is not None and node.text else None)
        except ValueError:
            out.append(None)
    return out[0], out[1]


# --- to ledger candidates ------------------------------------------------------------------------
def candidates(path: str, sha: str, message: Message, config: dict, engines: list[str],
               engine: str | None = None) -> tuple[list[Candidate], list[str]]:
    """Each usable manoeuvre as a plan or burn candidate; the warnings say what was left out."""
    out, warnings = [], []
    for man in message.manoeuvres:
        where = _at(path, man.line, f"MAN_ID {man.man_id}")
        if man.basis in SKIPPED_BASES:
            warnings.append(f"MAN_ID {man.man_id}: MAN_BASIS {man.basis} is not a plan or an executed burn; not recorded")
            continue
        if man.basis not in PLAN_BASES + EXECUTED_BASES:
            raise InputError(f"{where}: MAN_BASIS = {man.basis}; expected {', '.join(PLAN_BASES)} (a plan), "
                             f"{', '.join(EXECUTED_BASES)} (an executed burn) or {', '.join(SKIPPED_BASES)}")
        if any(e.startswith("DEPLOY_") for e in man.elements):
            warnings.append(f"MAN_ID {man.man_id} ({man.device}): a deployment block, not a burn; not recorded")
            continue
        if man.device is None:
            if engine is None:
                if len(engines) != 1:
                    raise InputError(f"{path}: an OPM names no MAN_DEVICE_ID; give --engine (engines: {', '.join(engines)})")
                engine = engines[0]
            eng = engine
        else:
            eng = engine_for(config, engines, man.device, where)
        kind = PLAN if man.basis in PLAN_BASES else BURN
        data: dict[str, Any] = {"engine": eng}
        if man.dv_m_s is not None:
            data["dv"] = man.dv_m_s
        elif kind == PLAN:
            raise InputError(f"{where}: a plan needs DV_X, DV_Y, DV_Z (the ledger plans in delta-v); "
                             f"MAN_COMPOSITION gives {', '.join(man.elements)}")
        elif man.duration_s:
            data["duration"] = man.duration_s
        elif man.delta_mass_kg is not None:
            data["propellant"] = -man.delta_mass_kg
        else:
            raise InputError(f"{where}: an executed burn needs DV_X, DV_Y, DV_Z, MAN_DURA or DELTA_MASS; "
                             f"MAN_COMPOSITION gives {', '.join(man.elements)}")
        source = base_source(path, sha, message.format, message.message_key, message.message)
        source.update(man_id=man.man_id, basis=man.basis, key=[kind, man.man_id])
        if man.device is not None:
            source["device"] = man.device
        if man.delta_mass_kg is not None:
            source["delta_mass_kg"] = man.delta_mass_kg
        if man.duration_s is not None and "duration" not in data:
            source["man_dura_s"] = man.duration_s
        if message.time_system != "UTC":
            source["time_system"] = message.time_system
        if man.sigma_m_s is not None:
            if kind == BURN and "dv" in data:
                data["sigma"] = man.sigma_m_s
            else:  # a plan carries no sigma in the ledger: kept with its source
                source["dv_sigma_m_s"] = man.sigma_m_s
        cand = Candidate(kind, man.at, data, source, f"MAN_ID {man.man_id}",
                         plan_key=(PLAN, man.man_id) if kind == BURN else None,
                         delta_mass_kg=man.delta_mass_kg)
        out.append(cand)
    if not out and not warnings:
        warnings.append(f"{path}: no manoeuvres in the message; nothing to record")
    return out, warnings


def reader(path: str, fmt: str | None = None, *, engine: str | None = None,
           opm_executed: bool = False, config: dict | None = None) -> Callable[[Any], Read]:
    """A reader for ``imports.run``: parses the file and maps it with the craft's import section."""
    def read(snap) -> Read:
        raw, sha = read_bytes(path)
        text = text_of(path, raw)
        message = read_message(path, text, fmt, opm_executed=opm_executed)
        conf = config if config is not None else (snap.craft.extra.get("import") or {})
        if engine is not None and engine not in snap.craft.engine_ids:
            raise InputError(f"--engine: unknown engine '{engine}' (engines: {', '.join(snap.craft.engine_ids)})")
        cands, warnings = candidates(path, sha, message, conf, snap.craft.engine_ids, engine)
        return Read(path, sha, message.format, cands, warnings)

    return read
