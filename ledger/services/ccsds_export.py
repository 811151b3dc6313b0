"""The ledger's manoeuvres and mass for flight dynamics, as a CCSDS OCM (502.0-B-3) written with
ccsds-ndm-py (imported here only, when an export is written).

One maneuver block per executed burn and per pending plan, under the MAN_ID it was imported with (or
PROPLEDGER-<entry id> for an entry typed in), so that importing the export matches every block to the
entry it came from and records nothing new. WET_MASS is the mass now, DRY_MASS the craft's.
"""
from __future__ import annotations

from typing import Any

from ..core.entries import BURN
from .importconfig import device_for
from .imports import NATIVE_PREFIX
from .ledger import Snapshot
from .timefmt import iso, now

KM_S = 1000.0
FRAME = "RSW_ROTATING"
DIRECTION_NOTE = ("propledger keeps the delta-v magnitude, not its direction: DV_X carries the magnitude, "
                  "DV_Y and DV_Z are zero")
CAUTION = ("decision support only: verify against the mission's flight-dynamics system of record, its "
           "mission rules and the responsible engineers")


def _epoch(t: float) -> str:
    return iso(t).rstrip("Z")


def _num(x: float) -> str:
    return repr(float(x))


def _block(ccsds_ndm, entry, basis: str, man_id: str, device: str, dv: float | None, sigma: float | None,
           delta_mass: float | None):
    """One maneuver block in the amount the ledger holds: DV, MAN_DURA or DELTA_MASS."""
    comment = []
    if entry.get("dv") is not None:
        comp = ["TIME_ABSOLUTE", "DV_X", "DV_Y", "DV_Z"]
        values = [_num(entry.get("dv") / KM_S), "0.0", "0.0"]
        units = ["km/s", "km/s", "km/s"]
        if sigma is not None and entry.get("dv"):
            comp.append("DV_MAG_SIGMA")
            values.append(_num(100.0 * sigma / entry.get("dv")))
            units.append("%")
        comment.append(DIRECTION_NOTE)
    elif entry.get("duration") is not None:
        comp, values, units = ["TIME_ABSOLUTE", "MAN_DURA"], [_num(entry.get("duration"))], ["s"]
    else:
        comp, values, units = ["TIME_ABSOLUTE", "DELTA_MASS"], [_num(-float(entry.get("propellant")))], ["kg"]
    if delta_mass is not None and "DELTA_MASS" not in comp:
        comp.append("DELTA_MASS")
        values.append(_num(delta_mass))
        units.append("kg")
    if dv is not None and entry.get("dv") is None:
        comment.append(f"delta-v by the ledger's replay: {dv:.6f} m/s")
    comment.append(f"propledger entry {entry.seq}")
    return ccsds_ndm.OcmManeuverParameters(
        man_id=man_id, man_device_id=device, man_composition=", ".join(comp), man_ref_frame=FRAME,
        man_basis=basis, man_units="[" + ", ".join(units) + "]",
        man_lines=[ccsds_ndm.ManLine(epoch=_epoch(entry.at), values=values)], comment=comment)


def ocm_text(snap: Snapshot, *, xml: bool = False, originator: str = "PROPLEDGER",
             at: float | None = None) -> tuple[str, dict[str, Any]]:
    """The OCM text and what it holds (counts and masses)."""
    import ccsds_ndm  # noqa: PLC0415 - only when an export is written

    t = now() if at is None else at
    config = snap.craft.extra.get("import") or {}
    res, rep = snap.resolved, snap.replay
    position = {e.seq: i for i, e in enumerate(res.events)}
    blocks = []
    executed = planned = 0
    for e in res.events:
        if e.kind != BURN:
            continue
        src = e.get("source") or {}
        i = position[e.seq]
        basis = src.get("basis") if src.get("basis") in ("TELEMETRY", "DETERMINED") else "DETERMINED"
        blocks.append(_block(ccsds_ndm, e, basis, src.get("man_id") or f"{NATIVE_PREFIX}{e.seq}",
                             src.get("device") or device_for(config, e.get("engine")), float(rep.dv[i]),
                             e.get("sigma"), -float(rep.propellant[i])))
        executed += 1
    for p in res.pending:
        src = p.get("source") or {}
        basis = src.get("basis") if src.get("basis") in ("CANDIDATE", "PLANNED", "ANTICIPATED") else "PLANNED"
        blocks.append(_block(ccsds_ndm, p, basis, src.get("man_id") or f"{NATIVE_PREFIX}{p.seq}",
                             src.get("device") or device_for(config, p.get("engine")), None,
                             src.get("dv_sigma_m_s"), src.get("delta_mass_kg")))
        planned += 1
    epochs = [e.at for e in res.events] + [p.at for p in res.pending]
    header = ccsds_ndm.OdmHeader(creation_date=_epoch(t), originator=originator,
                                 message_id=f"PROPLEDGER {snap.craft.name} {snap.head[0]}",
                                 comment=[CAUTION, f"ledger head entry {snap.head[0]} sha256 {snap.head[1][:16]}"])
    meta = ccsds_ndm.OcmMetadata(epoch_tzero=_epoch(min(epochs) if epochs else t), time_system="UTC",
                                 object_name=snap.craft.name)
    data = ccsds_ndm.OcmData()
    data.phys = ccsds_ndm.OcmPhysicalDescription(wet_mass=float(snap.state.mass_kg), dry_mass=float(snap.craft.dry_mass_kg))
    if blocks:
        data.man = blocks
    ocm = ccsds_ndm.Ocm(header, ccsds_ndm.OcmSegment(meta, data))
    text = ocm.to_str("xml" if xml else "kvn")
    return text, {"executed": executed, "planned": planned, "wet_mass_kg": float(snap.state.mass_kg),
                  "dry_mass_kg": float(snap.craft.dry_mass_kg)}
