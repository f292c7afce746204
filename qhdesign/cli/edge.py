"""``qhdesign edge`` and ``qhdesign pinchoff``: the 2D Thomas–Fermi stage on the command line.

The 1D stage runs first (donors frozen at their 1D state), then the cross-section is solved on
DOLFINx. Everything is computed before anything is written; under ``mpiexec`` only rank 0
writes (the XDMF field file is written collectively, as DOLFINx requires).
"""

from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import typer

from qhdesign.limits import check_refine

from .common import (
    CompressibilityFloor,
    GateBarrier,
    JsonOut,
    Refine,
    Sheets,
    SheetXC,
    StackFile,
    Surface,
    guarded,
    option_number,
    option_quantity,
    renamed,
    warn,
)


def _load_section(
    stack_file: Path,
    surface: str | None,
    gate_barrier: str | None,
    sheets: str = "1d-tables",
    sheet_xc: str = "none",
    compressibility_floor: float | None = None,
):
    from qhdesign.pipeline import (
        check_sheet_model,
        check_sheet_xc_choice,
        exposed_surface_model,
        section_from_stack,
    )
    from qhdesign.stack import load_stack

    check_sheet_model(sheets)  # refuse a bad choice before the 1D solve
    check_sheet_xc_choice(sheets, sheet_xc, compressibility_floor)
    stack = load_stack(stack_file)
    barrier = option_quantity(gate_barrier, "energy", "--gate-barrier")
    if surface is not None:
        exposed_surface_model(stack, None, surface)
    section = section_from_stack(
        stack,
        gate_barrier_J=barrier,
        sheets=sheets,
        sheet_xc=sheet_xc,
        compressibility_floor=compressibility_floor,
    )
    for name, why in _sheet_info(section).get("closed_form_wells", {}).items():
        warn(f"well {name}: {why}")
    return stack, section, exposed_surface_model(stack, section, surface)


def _sheet_xc_report(section, sheet_xc: str, compressibility_floor: float | None) -> dict:
    """The ``sheet_xc`` block of the JSON: model, reference, floor, what it does to each sheet."""
    from qhdesign.sheetxc import DEFAULT_COMPRESSIBILITY_FLOOR, describe_sheet_xc

    floor = (
        DEFAULT_COMPRESSIBILITY_FLOOR if compressibility_floor is None else compressibility_floor
    )
    return describe_sheet_xc(section, sheet_xc, compressibility_floor=floor)


def _echo_sheet_xc(xc: dict) -> None:
    if xc["model"] == "none":
        return
    for name, s in xc["sheets"].items():
        ratio = s["dmu_dn_over_bare_at_density"]
        typer.echo(
            f"  {name}: {s['law']}; dmu/dn = {ratio:.3f} x pi hbar^2/m* at its 1D density"
            if ratio is not None
            else f"  {name}: {s['law']}"
        )


def _sheet_info(section) -> dict:
    from qhdesign.pipeline import sheet_model_info

    return sheet_model_info(section)


#: Argument names of the 2D physics (error keys) -> options of ``edge`` and ``pinchoff``.
EDGE_OPTIONS = {
    "gate_voltage_V": "--gate-voltage",
    "field_T": "--field",
    "filling": "--filling",
    "gap_energy_J": "--gap-energy",
    "perimeter_m": "--perimeter",
    "gap_m": "--gate-gap",
    "gate_barrier_J": "--gate-barrier",
    "surface": "--surface",
    "refine": "--refine",
    "spin_gap": "--spin-gap",
    "spin_gap_J": "--spin-gap",
    "g_effective": "--g-effective",
    "strip_min_width_lB": "--strip-min-lb",
    "sheets": "--sheets",
    "sheet_xc": "--sheet-xc",
    "compressibility_floor": "--compressibility-floor",
}
PINCHOFF_OPTIONS = {
    "v_start": "--from",
    "v_stop": "--to",
    "v_step": "--step",
    "gap_m": "--gate-gap",
    "gate_barrier_J": "--gate-barrier",
    "surface": "--surface",
    "refine": "--refine",
    "sheets": "--sheets",
    "sheet_xc": "--sheet-xc",
    "compressibility_floor": "--compressibility-floor",
}


def _field(value: str | None) -> float | None:
    """A field option of ``edge``: a bare number is read in tesla (as documented there); the
    range is the physics' rule."""
    from qhdesign.units import _BARE_NUMBER

    if value is not None and _BARE_NUMBER.match(value.strip()):
        return option_number(value, "--field")
    return option_quantity(value, "field", "--field")


def _filling(value: str | None) -> float | None:
    if value is None:
        return None
    from qhdesign.errors import InputError

    try:
        nu = float(Fraction(value.strip()))
    except (ValueError, ZeroDivisionError):
        raise InputError(
            f"cannot read filling '{value}'; give a positive number or fraction (1, 2, 1/3)",
            source="option --filling",
        ) from None
    if not 0 < nu <= 100:
        raise InputError(
            f"filling {value} out of range; allowed 0 < nu <= 100", source="option --filling"
        )
    return nu


def _spin_gap(value: str) -> tuple[str, float | None]:
    """``--spin-gap``: a model name, or an energy (the gap itself)."""
    text = value.strip().lower()
    if text in ("bare", "enhanced"):
        return text, None
    return "bare", option_quantity(value, "energy", "--spin-gap")


def _positive_length(value: str | None, option: str) -> float | None:
    from qhdesign.errors import InputError

    out = option_quantity(value, "length", option)
    if out is not None and not 0 < out < 1e-3:
        raise InputError(
            f"{value} out of range; allowed 0 < length < 1 mm", source=f"option {option}"
        )
    return out


def _is_root() -> bool:
    from qhdesign.fem.backend import load

    MPI, _ = load()
    return MPI.COMM_WORLD.rank == 0


def _print_edge(res, stack_name: str) -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(width=120)
    console.print(
        f"[bold]{stack_name}[/bold]: gate edge at x = 0, "
        f"V_g = {res.settings.gate_voltage_V:+.3f} V; "
        f"{res.info['dofs']} dofs, {res.info['linear_solver']}"
    )
    t = Table(title="wells (top to bottom); edge = where n falls to 1 % of the bulk")
    for col in (
        "well",
        "bulk (cm^-2)",
        "depletion width (nm)",
        "rise 10-90 % (nm)",
        "tail e-fold (nm)",
        "cut under gate",
        "edge shift (nm/V)",
    ):
        t.add_column(col, justify="left" if col == "well" else "right")

    def nm(v):
        return "-" if v is None else f"{v * 1e9:.1f}"

    for w in res.wells:
        t.add_row(
            w.name,
            f"{w.bulk_density_m2 * 1e-4:.3g}",
            nm(w.depletion_width_m),
            nm(w.rise_10_90_m),
            nm(w.tail_length_m),
            "yes" if w.cut_under_gate else "no",
            nm(w.edge_shift_m_per_V),
        )
    console.print(t)
    tm = res.tail_model
    if tm.get("surface_mode_length_m") is not None:
        console.print(
            f"far tail: e-folding fitted where |n - n_bulk| is 1 % to 0.01 % of the step; "
            f"surface mode ({tm['surface']} surface, above {tm['top_sheet']}) "
            f"{tm['surface_mode_length_m'] * 1e9:.1f} nm (closed form "
            f"{tm['surface_mode_closed_form_m'] * 1e9:.1f} nm), slowest mode of the section "
            f"{tm['slowest_mode_length_m'] * 1e9:.1f} nm"
        )
    if res.settings.field_T:
        if res.edge_velocity_m_per_s is not None:
            console.print(
                f"B = {res.settings.field_T:g} T, bulk filling {res.bulk_filling:.3f}: the "
                f"nu = {res.operating_filling:g} edge lies at {res.edge_channel_x_m * 1e9:.1f} nm, "
                f"in-plane field {res.edge_field_V_per_m:.3g} V/m, drift velocity "
                f"{res.edge_velocity_m_per_s:.3g} m/s"
            )
        else:
            console.print(
                f"B = {res.settings.field_T:g} T: bulk filling {res.bulk_filling:.3f} is below "
                f"the operating filling {res.operating_filling:g}; no such edge channel"
            )
        for s in res.strips:
            console.print(
                f"  incompressible strip nu = {s['filling']:g}: "
                f"centre {s['centre_m'] * 1e9:.1f} nm, "
                f"width {s['width_m'] * 1e9:.1f} nm = {s['width_over_lB']:.2f} l_B, "
                f"field {s['field_V_per_m']:.3g} V/m, "
                f"v = {s['velocity_m_per_s']:.3g} m/s ({s['gap_kind']}, "
                f"{s['gap_J'] / 1.602176634e-22:.3g} meV)"
            )
            if s["narrower_than_lB"]:
                crit = res.settings.strip_min_width_lB
                console.print(
                    f"    [bold red]FLAG[/bold red] narrower than {crit:g} l_B "
                    f"(l_B = {s['magnetic_length_m'] * 1e9:.1f} nm): the electrostatic strip "
                    "model does not hold here"
                )
    if res.area_change_m2_per_V is not None:
        console.print(f"dA/dV = {res.area_change_m2_per_V * 1e12:.4g} um^2/V for the perimeter")


def register(app: typer.Typer) -> None:
    @app.command("edge")
    @guarded(options=EDGE_OPTIONS)
    def edge(
        stack_file: StackFile,
        gate_voltage: str = typer.Option(
            ..., "--gate-voltage", help="Depletion-gate bias, e.g. -0.8 or '-800 mV'."
        ),
        gap: str | None = typer.Option(
            None,
            "--gate-gap",
            help="Split gate with this opening (e.g. '300 nm') instead of one edge.",
        ),
        gap_old: str | None = typer.Option(None, "--gap", hidden=True),
        field: str | None = typer.Option(
            None, "--field", help="Perpendicular field (e.g. '4 T'; a bare number is tesla)."
        ),
        filling: str | None = typer.Option(
            None, "--filling", help="Operating filling nu of the reported edge channel (1, 2, 1/3)."
        ),
        gap_energy: str | None = typer.Option(
            None, "--gap-energy", help="Gap of a fractional filling, e.g. '0.5 meV' (adds a strip)."
        ),
        perimeter: str | None = typer.Option(
            None, "--perimeter", help="Gate perimeter for dA/dV, e.g. '4 um'."
        ),
        spin_gap: str = typer.Option(
            "bare",
            "--spin-gap",
            help="Odd-integer strip gap: bare (|g*| = 0.44), enhanced (exchange-enhanced "
            "|g*|, default 6.6), or an energy such as '0.8 meV'.",
        ),
        g_effective: float | None = typer.Option(
            None, "--g-effective", help="|g*| of the enhanced spin gap (implies enhanced)."
        ),
        strip_min_lb: float = typer.Option(
            1.0, "--strip-min-lb", help="Flag strips narrower than this many magnetic lengths."
        ),
        surface: Surface = None,
        sheets: Sheets = "1d-tables",
        sheet_xc: SheetXC = "none",
        compressibility_floor: CompressibilityFloor = None,
        gate_barrier: GateBarrier = None,
        refine: Refine = 1.0,
        json_out: JsonOut = None,
        csv_out: Path | None = typer.Option(None, "--csv", help="Write n(x) per well as CSV."),
        plot: Path | None = typer.Option(
            None, "--plot", help="Write the edge figure (PNG, SVG or PDF by suffix)."
        ),
        fields: Path | None = typer.Option(
            None, "--fields", help="Write the potential field for ParaView (XDMF, lengths in nm)."
        ),
    ) -> None:
        """Depletion edge of STACK_FILE under a gate: width, rise, tail, strips, lever arm."""
        from qhdesign.section import EdgeSettings, MeshOptions, SolverOptions

        v = option_quantity(gate_voltage, "voltage", "--gate-voltage")
        b = _field(field)
        nu = _filling(filling)
        e_gap = option_quantity(gap_energy, "energy", "--gap-energy")
        per = _positive_length(perimeter, "--perimeter")
        gap = renamed(gap, gap_old, "--gate-gap", "--gap")
        w = _positive_length(gap, "--gate-gap")
        check_refine(refine)
        gap_model, gap_J = _spin_gap(spin_gap)
        settings = EdgeSettings(
            v,
            field_T=b,
            filling=nu,
            gap_energy_J=e_gap,
            perimeter_m=per,
            spin_gap=gap_model,
            g_effective=g_effective,
            spin_gap_J=gap_J,
            strip_min_width_lB=strip_min_lb,
        )
        stack, section, surf = _load_section(
            stack_file, surface, gate_barrier, sheets, sheet_xc, compressibility_floor
        )
        xc = _sheet_xc_report(section, sheet_xc, compressibility_floor)
        mesh = MeshOptions(refine=refine)
        opts = SolverOptions(exposed=surf)
        if w is not None:
            _run_constriction(section, w, v, mesh, opts, stack, json_out, csv_out, plot, fields, xc)
            return
        from qhdesign.section import solve_edge

        res = solve_edge(section, settings, mesh, opts)
        if fields is not None:  # collective: every rank writes its part
            res.solver.solve(v)
            res.solver.write_fields(fields)
        root = _is_root()
        if root:
            _print_edge(res, stack.name)
            _echo_sheet_xc(xc)
        if root and json_out is not None:
            from qhdesign.io import atomic_write_json

            data = {
                "stack": str(stack_file),
                "surface": surf,
                "sheet_model": _sheet_info(section),
                "sheet_xc": xc,
                **res.to_dict(),
            }
            atomic_write_json(json_out, data)
        if root and csv_out is not None:
            from qhdesign.io import atomic_write_text

            atomic_write_text(csv_out, res.table().to_csv())
        if root and plot is not None:
            from qhdesign.plotting import save_figure, use_agg

            use_agg()
            from qhdesign.plotting.edge import plot_edge

            save_figure(plot_edge(res), plot)
        if root:
            for p in (json_out, csv_out, plot, fields):
                if p is not None:
                    typer.echo(f"wrote {p}")

    @app.command("pinchoff")
    @guarded(options=PINCHOFF_OPTIONS)
    def pinchoff(
        stack_file: StackFile,
        gap: str | None = typer.Option(
            None, "--gate-gap", help="Opening of the split gate, e.g. '300 nm' (required)."
        ),
        gap_old: str | None = typer.Option(None, "--gap", hidden=True),
        v_start: str = typer.Option("0", "--from", help="First gate voltage of the sweep (V)."),
        v_stop: str = typer.Option("-5", "--to", help="Last gate voltage of the sweep (V)."),
        v_step: str = typer.Option("0.1", "--step", help="Sweep step size (V, > 0)."),
        surface: Surface = None,
        sheets: Sheets = "1d-tables",
        sheet_xc: SheetXC = "none",
        compressibility_floor: CompressibilityFloor = None,
        gate_barrier: GateBarrier = None,
        refine: Refine = 1.0,
        json_out: JsonOut = None,
        csv_out: Path | None = typer.Option(None, "--csv", help="Write the sweep as CSV."),
        plot: Path | None = typer.Option(
            None, "--plot", help="Write the pinch-off figure (PNG, SVG or PDF by suffix)."
        ),
    ) -> None:
        """Centre density of a split-gate constriction vs gate voltage; pinch-off per well."""
        from qhdesign.errors import InputError
        from qhdesign.section import MeshOptions, SolverOptions, solve_pinchoff

        gap = renamed(gap, gap_old, "--gate-gap", "--gap")
        if gap is None:
            raise InputError(
                "required: the opening of the split gate, e.g. --gate-gap '300 nm'",
                source="option --gate-gap",
            )
        w = _positive_length(gap, "--gate-gap")
        a = option_quantity(v_start, "voltage", "--from")
        b = option_quantity(v_stop, "voltage", "--to")
        step = option_quantity(v_step, "voltage", "--step")
        if not 0.001 <= step <= 1.0:
            raise InputError("step must lie in [1 mV, 1 V]", source="option --step")
        if not b < a:
            raise InputError(
                f"the sweep must go down: last voltage {b:+.3f} V is not below the first "
                f"{a:+.3f} V",
                key="v_stop",
                related=("v_start",),
            )
        check_refine(refine)
        stack, section, surf = _load_section(
            stack_file, surface, gate_barrier, sheets, sheet_xc, compressibility_floor
        )
        xc = _sheet_xc_report(section, sheet_xc, compressibility_floor)
        res = solve_pinchoff(
            section,
            w,
            v_start=a,
            v_stop=b,
            v_step=-step,
            mesh_options=MeshOptions(refine=refine),
            options=SolverOptions(exposed=surf),
        )
        if not _is_root():
            return
        typer.echo(f"{stack.name}: split gate, gap {w * 1e9:.0f} nm ({surf} surface)")
        for name, vp in res.pinchoff_V.items():
            state = res.status.get(name, "open")
            if vp is not None:
                text = f"pinch-off {vp:+.3f} V"
            elif state == "closed at start":
                text = f"already pinched off at {a:+.3f} V (the first voltage)"
            else:
                text = "not pinched in the sweep"
            typer.echo(f"  {name}: {text}")
        if res.parallel_path_wells:
            vp = next((v for n, v in res.pinchoff_V.items() if res.roles.get(n) == "primary"), None)
            where = "" if vp is None else f" at {vp:+.3f} V"
            warn(
                f"{', '.join(res.parallel_path_wells)} still conduct(s) under the constriction "
                f"after the primary pinches off{where}: a parallel path around the "
                "constriction. Sweep further, narrow the gap, or feed the screening wells fewer "
                "donors"
            )
        if json_out is not None:
            from qhdesign.io import atomic_write_json

            atomic_write_json(
                json_out,
                {
                    "stack": str(stack_file),
                    "surface": surf,
                    "sheet_model": _sheet_info(section),
                    "sheet_xc": xc,
                    **res.to_dict(),
                },
            )
        if csv_out is not None:
            from qhdesign.io import atomic_write_text

            atomic_write_text(csv_out, res.table().to_csv())
        if plot is not None:
            from qhdesign.plotting import save_figure, use_agg

            use_agg()
            from qhdesign.plotting.edge import plot_pinchoff

            save_figure(plot_pinchoff(res), plot)
        for p in (json_out, csv_out, plot):
            if p is not None:
                typer.echo(f"wrote {p}")


def _run_constriction(section, w, v, mesh, opts, stack, json_out, csv_out, plot, fields, xc):
    from qhdesign.section import solve_constriction

    res = solve_constriction(section, w, v, mesh, opts)
    if fields is not None:  # collective: every rank writes its part
        res.solver.write_fields(fields)
    if not _is_root():
        return
    typer.echo(f"{stack.name}: split gate, gap {w * 1e9:.0f} nm, V_g = {v:+.3f} V")
    for k in res.centre_density_m2:
        width = res.channel_width_m[k]
        typer.echo(
            f"  {k}: centre density {res.centre_density_m2[k] * 1e-4:.3g} cm^-2, "
            + (
                "pinched"
                if res.pinched[k]
                else "not cut under the gates"
                if width is None
                else f"channel width {width * 1e9:.1f} nm"
            )
        )
    if json_out is not None:
        from qhdesign.io import atomic_write_json

        atomic_write_json(
            json_out,
            {
                "stack": str(stack.source),
                "sheet_model": _sheet_info(section),
                "sheet_xc": xc,
                **res.to_dict(),
            },
        )
    if csv_out is not None:
        from qhdesign.io import atomic_write_text

        atomic_write_text(csv_out, res.table().to_csv())
    if plot is not None:
        from qhdesign.plotting import save_figure, use_agg

        use_agg()
        from qhdesign.plotting.edge import plot_potential_map

        save_figure(plot_potential_map(res.solution, gates_m=res.gates_m), plot)
    for p in (json_out, csv_out, plot, fields):
        if p is not None:
            typer.echo(f"wrote {p}")
