"""``qhdesign island`` at the operating point: parse the options, run, print, write JSON/CSV/plot.

Called by :mod:`qhdesign.cli.island` unless the legacy ``--radius`` (split-gap conductor island)
is given.
"""

from __future__ import annotations

import csv
import io
import math
import re
from pathlib import Path

from qhdesign.errors import InputError

from .common import option_quantity

UEV = 1e-6 * 1.602176634e-19


def parse_field_range(text: str) -> tuple[float, ...]:
    """``"B1..B2:N"`` with a unit (``"11.5 T..13.5 T:20"``, or ``"11.5..13.5 T:20"``) -> N fields
    (T), evenly spaced, N in 2..200."""
    m = re.fullmatch(r"\s*(.+?)\s*\.\.\s*(.+?)\s*:\s*(\d+)\s*", str(text))
    if not m:
        raise InputError(
            f"cannot read '{text}'; expected B1..B2:N, e.g. '11.5..13.5 T:20'",
            source="option --field-range",
        )
    a, b, n = m.group(1), m.group(2), int(m.group(3))
    unit = re.sub(r"^[-+0-9.eE\s]+", "", b)
    try:
        float(a)
        a = f"{a} {unit}" if unit else a
    except ValueError:
        pass
    lo = option_quantity(a, "field", "--field-range")
    hi = option_quantity(b, "field", "--field-range")
    if not (2 <= n <= 200):
        raise InputError(f"N must lie in 2..200, got {n}", source="option --field-range")
    if not (0 < lo < hi <= 60):
        raise InputError(
            f"need 0 < B1 < B2 <= 60 T, got {lo:g} T..{hi:g} T", source="option --field-range"
        )
    return tuple(lo + (hi - lo) * k / (n - 1) for k in range(n))


def run(stack_file: Path, o: dict) -> None:
    """Run the operating-point island from the CLI options ``o`` (names as the typer parameters)."""
    from qhdesign.fem.backend import load
    from qhdesign.island.operating import GATE_WIDTH_M, IslandDevice
    from qhdesign.island.stage import OperatingSettings
    from qhdesign.island_options import parse_filling
    from qhdesign.pipeline import solve_island_operating
    from qhdesign.section.geometry import MeshOptions
    from qhdesign.stack import load_stack

    if o["gate_voltage"] is None:
        raise InputError(
            "the island needs the gate bias (e.g. --gate-voltage -1.0)",
            source="option --gate-voltage",
        )
    if o["gap"] is None:
        raise InputError(
            "the island needs the gap of the filling (e.g. --gap '120 ueV')", source="option --gap"
        )
    device = IslandDevice(
        gate_voltage_V=option_quantity(o["gate_voltage"], "voltage", "--gate-voltage"),
        gate_radius_m=option_quantity(o["gate_radius"], "length", "--gate-radius"),
        electronic_radius_m=option_quantity(
            o["electronic_radius"], "length", "--electronic-radius"
        ),
        gate_width_m=option_quantity(o["gate_width"], "length", "--gate-width") or GATE_WIDTH_M,
    )
    kw = {
        "filling": parse_filling(o["filling"] or "1/3", key="filling"),
        "gap_J": option_quantity(o["gap"], "energy", "--gap"),
        "gap_kind": o["gap_kind"],
        "field_T": option_quantity(o["field"], "field", "--field"),
        "temperature_K": option_quantity(o["temperature"], "temperature", "--temperature"),
        "level_width_J": option_quantity(o["level_width"], "energy", "--level-width"),
        "exchange": o["exchange"],
        "sheet_xc": o.get("sheet_xc") or "none",
        "bulk_shape": o["bulk_charge"],
        "r_threshold": o["r_threshold"],
    }
    if o["quantum_lifetime"] is not None:
        kw["quantum_lifetime_s"] = option_quantity(
            o["quantum_lifetime"], "time", "--quantum-lifetime"
        )
    if o["g_factor"] is not None:
        kw["g_factor"] = o["g_factor"]
    if o.get("compressibility_floor") is not None:
        kw["compressibility_floor"] = o["compressibility_floor"]
    settings = OperatingSettings(**kw)
    fields = parse_field_range(o["field_range"]) if o["field_range"] else ()
    if o["csv_out"] is not None and not fields:
        raise InputError(
            "--csv writes the --field-range table; give --field-range", source="option --csv"
        )
    refine = o["refine"]
    from qhdesign.fem.grid import check_refine

    check_refine(refine, source="option --refine")
    from qhdesign.pipeline import check_sheet_model, sheet_model_info

    sheets = check_sheet_model(o.get("sheets") or "1d-tables")
    stack = load_stack(stack_file)
    # the sheets' own exchange-correlation is a constant-DOS sheet model (docs/island.md, §1):
    # with --sheet-xc and the default --sheets the constant-DOS sheets are taken
    if settings.sheet_xc != "none" and o.get("sheets") in (None, "1d-tables"):
        sheets = "constant-dos"
    res = solve_island_operating(
        stack,
        device,
        settings,
        fields_T=fields,
        mesh_options=MeshOptions(refine=refine),
        sheets=sheets,
    )
    MPI, _ = load()
    if MPI.COMM_WORLD.rank != 0:
        return
    _print(res, bool(fields))
    from qhdesign.io import atomic_write_json, atomic_write_text

    written = []
    if o["json_out"] is not None:
        d = {
            "stack_file": str(stack_file),
            "sheet_model": sheet_model_info(res.operating.section),
            **res.to_dict(),
        }
        d.update(_interferometer(res, settings, o))
        if fields:
            d["field_range"] = res.rows()
        atomic_write_json(o["json_out"], _finite(d))
        written.append(o["json_out"])
    if o["csv_out"] is not None:
        atomic_write_text(o["csv_out"], rows_to_csv(res.rows()))
        written.append(o["csv_out"])
    if o["plot"] is not None:
        from qhdesign.plotting import save_figure, use_agg

        use_agg()
        from qhdesign.plotting.island import plot_operating_island

        save_figure(plot_operating_island(res), o["plot"])
        written.append(o["plot"])
    import typer

    for p in written:
        typer.echo(f"wrote {p}")


def _interferometer(res, settings, o: dict) -> dict:
    """regime, period_gate_V, T0_K, visibility and the interferometer block (docs/cli.md) from
    the operating point, at the electron temperature (``--electron-temperature``)."""
    from qhdesign.island_figures import DEFAULT_EDGE_VELOCITY_M_S, QHConditions, figures_from_flat

    flat = res.point.flat()
    v_opt = option_quantity(o.get("edge_velocity"), "velocity", "--edge-velocity")
    v_strip = flat.get("edge_velocity_m_per_s")
    if v_opt is not None:
        v, src = v_opt, "option"
    elif v_strip is not None and v_strip > 0:
        v, src = float(v_strip), "operating point (compressible strip)"
    else:
        v, src = DEFAULT_EDGE_VELOCITY_M_S, "default"
    cond = QHConditions(
        filling=settings.filling,
        gap_qp_J=settings.quasiparticle_gap_J,
        temperature_K=option_quantity(
            o.get("electron_temperature") or "20 mK", "temperature", "--electron-temperature"
        ),
        edge_velocity_m_s=v,
        field_T=flat["field_T"],
        edge_velocity_source=src,
    )
    f = figures_from_flat(flat, cond)
    top = {k: f[k] for k in ("regime", "period_gate_V", "T0_K", "visibility")}
    return {**top, "interferometer": f}


def _finite(obj):
    """JSON has no infinity: None instead."""
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if isinstance(obj, dict):
        return {k: _finite(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_finite(v) for v in obj]
    return obj


def rows_to_csv(rows: list[dict]) -> str:
    """Rows with the same keys -> CSV text (SI, units in the column names)."""
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(rows[0].keys()), lineterminator="\n")
    w.writeheader()
    for r in rows:
        w.writerow({k: (repr(v) if isinstance(v, float) else v) for k, v in r.items()})
    return buf.getvalue()


def _print(res, with_range: bool) -> None:
    from rich.console import Console
    from rich.table import Table

    p, op, st = res.point, res.operating, res.settings
    c = Console(width=120)
    r_in = res.device.electronic_radius_m
    label = (
        "lithographic opening"
        if r_in is None
        else f"opening found for the given electronic radius {r_in * 1e9:.0f} nm"
    )
    v = res.device.gate_voltage_V
    c.print(
        f"[bold]{res.stack_name}[/bold]: island at the operating point, gate {v:g} V, "
        f"{label} R_gate = {op.gate_radius_m * 1e9:.1f} nm; B = {p.field_T:.4g} T, nu = "
        f"1/{round(1 / st.filling)}, T = {res.temperature_K:g} K; {op.info['dofs']} dofs"
    )
    from qhdesign.island.stage import gate_dielectric

    gd = gate_dielectric(op.section)
    c.print(
        f"gate dielectric: {gd['thickness_m'] * 1e9:g} nm, eps_r = {gd['permittivity_rel']:g} "
        f"(series {gd['capacitance_F_m2'] * 1e2:.4g} uF/cm^2 under the gate)"
        if gd["thickness_m"] > 0
        else "gate dielectric: none (metal on the semiconductor)"
    )
    s = p.strip
    t = Table(title="operating point")
    t.add_column("quantity")
    t.add_column("value", justify="right")
    rows = [
        ("lithographic radius R_gate (nm)", f"{op.gate_radius_m * 1e9:.1f}"),
        ("electronic radius of the interfering edge (nm)", f"{s.interfering_radius_m * 1e9:.1f}"),
        (
            "compressible strip (nm)",
            f"{s.inner_radius_m * 1e9:.1f} .. {s.outer_radius_m * 1e9:.1f}",
        ),
        ("incompressible strip width (nm)", f"{s.incompressible_width_m * 1e9:.1f}"),
        ("A_I, A_L (um^2)", f"{s.A_I_m2 * 1e12:.4g}, {s.A_L_m2 * 1e12:.4g}"),
        ("dA_I/dV_gate (um^2/V)", f"{p.dA_I_dV_m2_per_V * 1e12:.4g}"),
        (
            "K_I = electrostatic + edge term (ueV)",
            f"{p.K_I_J / UEV:.4g} = {p.K_I_electrostatic_J / UEV:.4g} + "
            f"{p.K_I_edge_term_J / UEV:.3g}",
        ),
        ("K_L, K_IL (ueV)", f"{p.K_L_J / UEV:.4g}, {p.K_IL_J / UEV:.4g}"),
        (
            "K_IL/K_I (electrostatic only)",
            f"{p.ratio:.4f} ({p.K_IL_J / p.K_I_electrostatic_J:.4f})",
        ),
        ("E_C = (K_L - K_IL^2/K_I)/2 (ueV)", f"{p.forms['charging_energy_J'] / UEV:.4g}"),
        ("period compressible Phi0/A_I (mT)", f"{p.forms['period_compressible_T'] * 1e3:.4g}"),
        (
            "period incompressible (e/e*)Phi0/(A_I - r A_L) (mT)",
            f"{p.forms['period_incompressible_T'] * 1e3:.4g}",
        ),
        (
            "fixed-filling window (mT), edge width at T",
            f"{p.forms['window_T'] * 1e3:.4g}, {p.forms['window_edge_width_T'] * 1e3:.3g}",
        ),
    ]
    for a, b in rows:
        t.add_row(a, b)
    c.print(t)
    w = Table(title="sheets")
    for col in ("sheet", "cut under gate", "cut radius (nm)", "filling", "state"):
        w.add_column(col)
    for sh in op.sheets:
        info = p.screening_wells.get(sh.name)
        w.add_row(
            sh.name,
            "yes" if sh.cut_under_gate else "no",
            "" if sh.cut_radius_m is None else f"{sh.cut_radius_m * 1e9:.1f}",
            f"{info['filling']:.3f}" if info else f"{p.primary_filling:.3f} (primary)",
            info["state"] if info else "",
        )
    c.print(w)
    if with_range:
        f = Table(title="across the field range")
        names = list(p.screening_wells)
        for col in (
            "B (T)",
            "nu primary",
            *[f"nu {n}" for n in names],
            "K_I (ueV)",
            "K_L (ueV)",
            "K_IL (ueV)",
            "r",
            "E_C (ueV)",
            "",
        ):
            f.add_column(col, justify="right")
        for q in res.points:
            f.add_row(
                f"{q.field_T:.4g}",
                f"{q.primary_filling:.3f}",
                *[f"{q.screening_wells[n]['filling']:.3f}" for n in names],
                f"{q.K_I_J / UEV:.4g}",
                f"{q.K_L_J / UEV:.4g}",
                f"{q.K_IL_J / UEV:.4g}",
                f"{q.ratio:.4f}",
                f"{q.forms['charging_energy_J'] / UEV:.4g}",
                "r > threshold" if q.ratio > st.r_threshold else "",
            )
        c.print(f)
