"""``qhdesign island``: the interferometer island (2D axisymmetric).

Default: the island at its operating point (:mod:`qhdesign.island`): the gate opening and bias
in, a nonlinear Thomas–Fermi solve of every sheet, the linear response around it (K_I, K_L, K_IL
with the edge's own term), periods and window; ``--field-range`` across a plateau.
Legacy (``--radius``): the split-gap conductor island of a given electronic radius
(:mod:`qhdesign.tf2d.island`), kept for comparison. Under ``mpiexec`` every rank solves its
part; only rank 0 prints and writes.
"""

from __future__ import annotations

from pathlib import Path

import typer

from .common import (
    CompressibilityFloor,
    JsonOut,
    Refine,
    Sheets,
    SheetXC,
    guarded,
    option_quantity,
)


def _print(res) -> None:
    from rich.console import Console
    from rich.table import Table

    s = res.summary()
    g = res.geometry
    console = Console(width=110)
    console.print(
        f"[bold]{res.column_name}[/bold]: island R = {g.radius_m * 1e9:.0f} nm "
        f"(A = {s['area_um2']:.4g} um^2), edge ring {g.ring_width_m * 1e9:.0f} nm, gate edge at "
        f"{g.gate_radius_m * 1e9:.0f} nm; screening: {res.settings.screening}, surface: "
        f"{res.settings.surface}; {res.info['dofs']} dofs"
    )
    t = Table(title="edge ring I and bulk L")
    t.add_column("quantity")
    t.add_column("value", justify="right")
    rows = [
        ("C_II, C_LL, C_IL (aF)", f"{s['C_II_aF']:.4g}, {s['C_LL_aF']:.4g}, {s['C_IL_aF']:.4g}"),
        ("K_I, K_L, K_IL (ueV)", f"{s['K_I_ueV']:.4g}, {s['K_L_ueV']:.4g}, {s['K_IL_ueV']:.4g}"),
        ("K_IL/K_I", f"{s['K_IL_over_K_I']:.4f}"),
        ("E_C = (K_L - K_IL^2/K_I)/2 (ueV)", f"{s['E_C_ueV']:.4g}"),
        ("e^2/C_total (ueV)", f"{s['e2_over_C_total_ueV']:.4g}"),
        ("flux period Phi0/A (mT)", f"{s['compressible_period_mT']:.4g}"),
    ]
    if res.settings.filling is not None:
        rows.append(("incompressible period (mT)", f"{s['incompressible_period_mT']:.4g}"))
    if res.settings.gap_energy_J is not None:
        rows.append(("fixed-filling window (mT)", f"{s['fixed_filling_window_mT']:.4g}"))
    for a, b in rows:
        t.add_row(a, b)
    console.print(t)


def _print_figures(f: dict) -> None:
    def mT(v):
        return "-" if v is None else f"{v * 1e3:.4g} mT"

    gate = "-" if f["period_gate_V"] is None else f"{f['period_gate_V'] * 1e3:.4g} mV"
    typer.echo(
        f"interferometer (nu = {f['filling']:.4g}, B = {f['field_T']:.4g} T): regime "
        f"{f['regime']} (K_IL/K_I = {f['K_IL_over_K_I']:.4f}); periods "
        f"{mT(f['period_compressible_T'])} / {mT(f['period_incompressible_T'])} "
        f"(A_I - r A_L form); window {mT(f['window_T'])}; gate period {gate}"
    )
    typer.echo(
        f"E_C = {f['E_C_mK']:.4g} mK vs T = {f['temperature_K'] * 1e3:.4g} mK; T0 = "
        f"{f['T0_K'] * 1e3:.4g} mK (v = {f['edge_velocity_m_per_s']:.3g} m/s, L = "
        f"{f['path_length_m'] * 1e6:.3g} um, {f['edge_velocity_source']}): visibility factor "
        f"{f['visibility']:.3f}"
    )


#: Argument names of the island physics (error keys) -> options of ``island``.
ISLAND_OPTIONS = {
    "radius_m": "--radius",
    "ring_width_m": "--ring-width",
    "gate_offset_m": "--gate-offset",
    "split_gap_m": "--split-gap",
    "filling": "--filling",
    "gap_energy_J": "--gap",
    "screening": "--screening",
    "surface": "--surface",
    "far": "--far",
    "refine": "--refine",
    # the operating-point island (qhdesign.island.operating / response)
    "gate_radius_m": "--gate-radius",
    "electronic_radius_m": "--electronic-radius",
    "gate_width_m": "--gate-width",
    "gate_voltage_V": "--gate-voltage",
    "bulk_shape": "--bulk-charge",
    "gap_J": "--gap",
    "gap_kind": "--gap-kind",
    "field_T": "--field",
    "temperature_K": "--temperature",
    "level_width_J": "--level-width",
    "quantum_lifetime_s": "--quantum-lifetime",
    "g_factor": "--g-factor",
    "r_threshold": "--r-threshold",
    "sheets": "--sheets",
    "sheet_xc": "--sheet-xc",
    "compressibility_floor": "--compressibility-floor",
    # the interferometer figures (qhdesign.island_figures)
    "electron_temperature_K": "--electron-temperature",
    "edge_velocity_m_s": "--edge-velocity",
    "gap_qp_J": "--gap",
}


def register(app: typer.Typer) -> None:
    @app.command("island")
    @guarded(options=ISLAND_OPTIONS)
    def island(
        stack_file: Path = typer.Argument(..., help="Layer-stack TOML file."),
        gate_radius: str | None = typer.Option(
            None, "--gate-radius", help="Lithographic radius of the gate opening, e.g. '1.25 um'."
        ),
        electronic_radius: str | None = typer.Option(
            None,
            "--electronic-radius",
            help="Instead of --gate-radius: a measured radius of the interfering edge; the "
            "opening that puts the edge there is solved for.",
        ),
        gate_voltage: str | None = typer.Option(
            None, "--gate-voltage", help="Bias of the ring gate, e.g. -1.0 (V)."
        ),
        gate_width: str | None = typer.Option(
            None, "--gate-width", help="Width of the ring gate (default 1 um)."
        ),
        field: str | None = typer.Option(
            None,
            "--field",
            help="Operating field (default: the primary's 1D density at --filling).",
        ),
        field_range: str | None = typer.Option(
            None,
            "--field-range",
            help="Fields B1..B2:N for the K's across a plateau, e.g. '11.5..13.5 T:20'.",
        ),
        gap_kind: str = typer.Option(
            "quasiparticle",
            "--gap-kind",
            help="Which gap --gap is: quasiparticle (creation energy) or activation (= 2x).",
        ),
        temperature: str | None = typer.Option(
            None, "--temperature", help="Island temperature (default: the stack's)."
        ),
        level_width: str | None = typer.Option(
            None, "--level-width", help="Landau-level width Gamma of the sheets, e.g. '1 meV'."
        ),
        quantum_lifetime: str | None = typer.Option(
            None, "--quantum-lifetime", help="Quantum lifetime for Gamma (default 1 ps)."
        ),
        g_factor: float | None = typer.Option(None, "--g-factor", help="|g*| (default 0.44)."),
        exchange: bool = typer.Option(
            True,
            "--exchange/--no-exchange",
            help="Hartree-Fock exchange in the sheets' dmu/dn of the linear response (at B).",
        ),
        sheet_xc: SheetXC = "none",
        compressibility_floor: CompressibilityFloor = None,
        sheets: Sheets = "1d-tables",
        bulk_charge: str = typer.Option(
            "uniform", "--bulk-charge", help="Shape of the bulk's added charge: uniform, parabolic."
        ),
        r_threshold: float = typer.Option(
            0.5, "--r-threshold", help="Flag fields where K_IL/K_I exceeds this."
        ),
        csv_out: Path | None = typer.Option(
            None, "--csv", help="Write the --field-range table as CSV (SI)."
        ),
        radius: str | None = typer.Option(
            None,
            "--radius",
            help="LEGACY: electronic radius of the split-gap conductor island (old model).",
        ),
        ring_width: str = typer.Option(
            "50 nm", "--ring-width", help="LEGACY (--radius): width of the edge ring."
        ),
        gate_offset: str = typer.Option(
            "100 nm", "--gate-offset", help="LEGACY (--radius): R_gate - R."
        ),
        split_gap: str = typer.Option(
            "10 nm", "--split-gap", help="LEGACY (--radius): gap between bulk and edge ring."
        ),
        filling: str | None = typer.Option(
            None, "--filling", help="Laughlin filling 1/m for the periods (1, 1/3, 1/5)."
        ),
        gap: str | None = typer.Option(
            None, "--gap", help="Gap of the filling, e.g. '120 ueV' (kind: --gap-kind)."
        ),
        screening: str = typer.Option(
            "tf",
            "--screening",
            help="LEGACY (--radius): screening wells tf or grounded.",
        ),
        surface: str | None = typer.Option(
            None,
            "--surface",
            help="Exposed surface inside the gate: frozen or pinned (default: the stack's "
            "surface.charge).",
        ),
        far: str = typer.Option("robin", "--far", help="Far boundary: robin or grounded."),
        outer_well: bool = typer.Option(
            True,
            "--outer-well/--no-outer-well",
            help="LEGACY (--radius): primary well beyond the gate edge as a sheet.",
        ),
        refine: Refine = 1.0,
        electron_temperature: str = typer.Option(
            "20 mK",
            "--electron-temperature",
            help="Electron temperature for the visibility (x/sinh x) and the thermal window.",
        ),
        edge_velocity: str | None = typer.Option(
            None,
            "--edge-velocity",
            help="Edge velocity for T0 (default: the operating point's strip, else 2e4 m/s).",
        ),
        json_out: JsonOut = None,
        plot: Path | None = typer.Option(
            None, "--plot", help="Write the figure (n(r) and, with --field-range, K's vs B)."
        ),
    ) -> None:
        """K_I, K_L, K_IL, charging energy, periods and window of an island in STACK_FILE."""

        if radius is None:
            from .island_op import run

            return run(stack_file, dict(locals()))
        if sheet_xc != "none" or compressibility_floor is not None:
            from qhdesign.errors import InputError

            raise InputError(
                "the sheets' own exchange-correlation applies to the operating-point island "
                "(give --gate-radius or --electronic-radius instead of --radius)",
                key="sheet_xc",
            )
        from dataclasses import replace

        from qhdesign.fem.backend import load
        from qhdesign.island import IslandGeometry, IslandSettings
        from qhdesign.island_options import parse_filling
        from qhdesign.limits import check_refine
        from qhdesign.pipeline import solve_island
        from qhdesign.stack import load_stack

        geometry = IslandGeometry(
            radius_m=option_quantity(radius, "length", "--radius"),
            ring_width_m=option_quantity(ring_width, "length", "--ring-width"),
            gate_offset_m=option_quantity(gate_offset, "length", "--gate-offset"),
            split_gap_m=option_quantity(split_gap, "length", "--split-gap"),
        )
        from qhdesign.island_figures import (
            conditions_from_edge,
            figures_from_result,
            island_column,
            split_island_options,
        )

        cond, _, gate_v = split_island_options(
            {
                "filling": filling,
                "gap": gap,
                "gap_kind": gap_kind,
                "temperature": electron_temperature,
                "edge_velocity": edge_velocity,
                "field": field,
                "gate_voltage": gate_voltage,
            },
            source_prefix="--",
        )
        settings = IslandSettings(
            screening=screening,
            surface=surface,
            far=far,
            outer_well=outer_well,
            filling=parse_filling(filling, key="filling"),
            gap_energy_J=cond.gap_qp_J,  # the quasiparticle gap (an activation gap halved)
        )
        settings = replace(settings, mesh=replace(settings.mesh, refine=check_refine(refine)))
        stack = load_stack(stack_file)
        column = island_column(stack)
        if gate_v is not None:
            cond = conditions_from_edge(stack, cond, gate_v)
        res = solve_island(column, geometry, settings, keep_potentials=plot is not None)
        figures = figures_from_result(res, cond, column.primary.density_m2)
        MPI, _ = load()
        if MPI.COMM_WORLD.rank != 0:
            return
        _print(res)
        _print_figures(figures)
        if json_out is not None:
            from qhdesign.io import atomic_write_json

            top = {k: figures[k] for k in ("regime", "period_gate_V", "T0_K", "visibility")}
            atomic_write_json(
                json_out,
                {
                    "stack_file": str(stack_file),
                    **res.to_dict(),
                    **top,
                    "interferometer": figures,
                },
            )
        if plot is not None:
            from qhdesign.plotting import save_figure, use_agg

            use_agg()
            from qhdesign.plotting.island import plot_island

            save_figure(plot_island(res), plot)
        for p in (json_out, plot):
            if p is not None:
                typer.echo(f"wrote {p}")
