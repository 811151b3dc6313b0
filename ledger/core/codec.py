"""Craft <-> plain dict of SI numbers: the form the store keeps, so reading a ledger needs no pint."""
from __future__ import annotations

from typing import Any

from .craft import Craft, Engine, GasTable, ImpulseBit, Performance, Pressurant, Reserve, Routine, Tank


def craft_to_dict(craft: Craft) -> dict[str, Any]:
    def tank(t: Tank) -> dict[str, Any]:
        d: dict[str, Any] = {"id": t.id, "fluid": t.fluid, "load_kg": t.load_kg, "residual_kg": t.residual_kg}
        if t.volume_m3 is not None:
            d["volume_m3"] = t.volume_m3
        if t.pressurant is not None:
            p = t.pressurant
            d["pressurant"] = {"gas": p.gas, "pressure_pa": p.pressure_pa, "temperature_k": p.temperature_k}
        if t.load_sigma_kg is not None:
            d["load_sigma_kg"] = t.load_sigma_kg
        if t.expansion != 1.0:
            d["expansion"] = t.expansion
        if t.gas_table is not None and not t.gas_table.ideal:
            g = t.gas_table
            d["gas_table"] = {"gas": g.gas, "gas_kg": g.gas_kg, "molar_mass_kg_mol": g.molar_mass_kg_mol,
                              "density0": g.density0, "density_step": g.density_step,
                              "temperature0_k": g.temperature0_k, "temperature_step_k": g.temperature_step_k,
                              "z": [list(row) for row in g.z]}
        return d

    def engine(e: Engine) -> dict[str, Any]:
        d: dict[str, Any] = {"id": e.id, "isp_s": e.isp_s, "thrust_n": e.thrust_n,
                             "cant_deg": e.cant_deg, "feeds": dict(e.feeds)}
        if e.isp_sigma_s is not None:
            d["isp_sigma_s"] = e.isp_sigma_s
        if e.thrust_sigma_n is not None:
            d["thrust_sigma_n"] = e.thrust_sigma_n
        if e.pulse_isp_factor != 1.0:
            d["pulse_isp_factor"] = e.pulse_isp_factor
        if e.life:
            d["life"] = dict(e.life)
        if e.mixture_ratio_sigma is not None:
            d["mixture_ratio_sigma"] = e.mixture_ratio_sigma
        if e.performance is not None:
            pf = e.performance
            d["performance"] = {"pressure_pa": list(pf.pressure_pa), "thrust_n": list(pf.thrust_n),
                                "isp_s": list(pf.isp_s)}
        if e.qualified_pressure_pa is not None:
            d["qualified_pressure_pa"] = list(e.qualified_pressure_pa)
        if e.impulse_bit is not None:
            ib = e.impulse_bit
            d["impulse_bit"] = {"on_time_s": list(ib.on_time_s), "impulse_ns": list(ib.impulse_ns),
                                "reference_thrust_n": ib.reference_thrust_n}
            if ib.pressure_pa is not None:
                d["impulse_bit"]["pressure_pa"] = ib.pressure_pa
        return d

    out: dict[str, Any] = {
        "name": craft.name,
        "dry_mass_kg": craft.dry_mass_kg,
        "tanks": [tank(t) for t in craft.tanks],
        "engines": [engine(e) for e in craft.engines],
        "reserves": [{"id": r.id, "engine": r.engine, "dv_m_s": r.dv_m_s} for r in craft.reserves],
        "routine": [{"engine": r.engine, "dv_per_year_m_s": r.dv_per_year_m_s} for r in craft.routine],
    }
    if craft.dry_mass_sigma_kg is not None:
        out["dry_mass_sigma_kg"] = craft.dry_mass_sigma_kg
    if craft.extra:
        out["extra"] = dict(craft.extra)
    return out


def craft_from_dict(d: dict[str, Any]) -> Craft:
    def tank(t: dict[str, Any]) -> Tank:
        p = t.get("pressurant")
        return Tank(
            id=t["id"], fluid=t["fluid"], load_kg=float(t["load_kg"]), residual_kg=float(t.get("residual_kg", 0.0)),
            volume_m3=t.get("volume_m3"),
            pressurant=Pressurant(p["gas"], float(p["pressure_pa"]), float(p["temperature_k"])) if p else None,
            load_sigma_kg=t.get("load_sigma_kg"), expansion=float(t.get("expansion", 1.0)),
            gas_table=gas_table(t["gas_table"]) if t.get("gas_table") else None,
        )

    def gas_table(g: dict[str, Any]) -> GasTable:
        return GasTable(str(g["gas"]), float(g["gas_kg"]), float(g["molar_mass_kg_mol"]), float(g["density0"]),
                        float(g["density_step"]), float(g["temperature0_k"]), float(g["temperature_step_k"]),
                        tuple(tuple(float(x) for x in row) for row in g["z"]))

    def engine(e: dict[str, Any]) -> Engine:
        return Engine(
            id=e["id"], isp_s=float(e["isp_s"]), thrust_n=float(e["thrust_n"]), cant_deg=float(e.get("cant_deg", 0.0)),
            feeds={k: float(v) for k, v in e["feeds"].items()},
            isp_sigma_s=e.get("isp_sigma_s"), thrust_sigma_n=e.get("thrust_sigma_n"),
            pulse_isp_factor=float(e.get("pulse_isp_factor", 1.0)),
            life={k: float(v) for k, v in e["life"].items()} if e.get("life") else None,
            mixture_ratio_sigma=e.get("mixture_ratio_sigma"),
            performance=performance(e["performance"]) if e.get("performance") else None,
            qualified_pressure_pa=tuple(float(x) for x in e["qualified_pressure_pa"])
            if e.get("qualified_pressure_pa") else None,
            impulse_bit=impulse_bit(e["impulse_bit"]) if e.get("impulse_bit") else None,
        )

    def impulse_bit(ib: dict[str, Any]) -> ImpulseBit:
        return ImpulseBit(tuple(float(x) for x in ib["on_time_s"]), tuple(float(x) for x in ib["impulse_ns"]),
                          float(ib["reference_thrust_n"]),
                          float(ib["pressure_pa"]) if ib.get("pressure_pa") is not None else None)

    def performance(pf: dict[str, Any]) -> Performance:
        return Performance(tuple(float(x) for x in pf["pressure_pa"]), tuple(float(x) for x in pf["thrust_n"]),
                           tuple(float(x) for x in pf["isp_s"]))

    return Craft(
        name=d["name"],
        dry_mass_kg=float(d["dry_mass_kg"]),
        tanks=tuple(tank(t) for t in d["tanks"]),
        engines=tuple(engine(e) for e in d["engines"]),
        reserves=tuple(Reserve(r["id"], r["engine"], float(r["dv_m_s"])) for r in d.get("reserves", [])),
        routine=tuple(Routine(r["engine"], float(r["dv_per_year_m_s"])) for r in d.get("routine", [])),
        dry_mass_sigma_kg=d.get("dry_mass_sigma_kg"),
        extra=d.get("extra", {}),
    )
