"""``qhdesign island``: capacitances and energies of an interferometer island (2D axisymmetric).

The 1D stage runs first to place the wells, then the island's Maxwell capacitance matrix is
solved on DOLFINx. Under ``mpiexec`` every rank solves its part; only rank 0 prints and writes.
"""

from __future__ import annotations

from pathlib import Path

import typer

from .common import guarded, option_quantity, renamed


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


def register(app: typer.Typer) -> None:
    @app.command("island")
    @guarded
    def island(
        stack_file: Path = typer.Argument(..., help="Layer-stack TOML file."),
        radius: str = typer.Option(
            ..., "--radius", help="Electronic radius of the island, e.g. '0.8 um'."
        ),
        ring_width: str = typer.Option(
            "50 nm", "--ring-width", help="Width of the interfering edge ring."
        ),
        gate_offset: str = typer.Option(
            "100 nm", "--gate-offset", help="Gate edge minus electronic radius (R_gate - R)."
        ),
        split_gap: str = typer.Option(
            "10 nm", "--split-gap", help="Gap between bulk and edge ring (incompressible strip)."
        ),
        filling: str | None = typer.Option(
            None, "--filling", help="Laughlin filling 1/m for the periods (1, 1/3, 1/5)."
        ),
        gap: str | None = typer.Option(
            None,
            "--gap-energy",
            help="Quasiparticle gap for the fixed-filling window, e.g. '120 ueV'.",
        ),
        gap_old: str | None = typer.Option(None, "--gap", hidden=True),
        screening: str = typer.Option(
            "tf",
            "--screening",
            help="Screening wells: tf (Thomas-Fermi, with quantum capacitance) or grounded.",
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
            help="Keep the primary well beyond the gate edge as a screening sheet.",
        ),
        refine: float = typer.Option(1.0, "--refine", help="Mesh refinement factor (1 = default)."),
        json_out: Path | None = typer.Option(None, "--json", help="Write results as JSON (SI)."),
        plot: Path | None = typer.Option(
            None, "--plot", help="Write the potential maps u_I, u_L (PNG, SVG or PDF by suffix)."
        ),
    ) -> None:
        """Capacitance matrix, K_I, K_L, K_IL and charging energy of an island in STACK_FILE."""
        from qhdesign.errors import InputError
        from qhdesign.fem.backend import load
        from qhdesign.island import IslandGeometry
        from qhdesign.island.conductor import parse_filling
        from qhdesign.pipeline import solve_island
        from qhdesign.stack import load_stack

        gap = renamed(gap, gap_old, "--gap-energy", "--gap")
        geometry = IslandGeometry(
            radius_m=option_quantity(radius, "length", "--radius"),
            ring_width_m=option_quantity(ring_width, "length", "--ring-width"),
            gate_offset_m=option_quantity(gate_offset, "length", "--gate-offset"),
            split_gap_m=option_quantity(split_gap, "length", "--split-gap"),
        )
        if not 0.25 <= refine <= 4:
            raise InputError("refine must lie in [0.25, 4]", source="option --refine")
        options = {
            "screening": screening,
            "surface": surface,
            "far": far,
            "outer_well": outer_well,
            "filling": parse_filling(filling),
            "gap": None if gap is None else str(gap),  # parsed (unit required) by the stage
            "refine": refine,
        }
        stack = load_stack(stack_file)
        res = solve_island(stack, geometry, keep_potentials=plot is not None, **options)
        MPI, _ = load()
        if MPI.COMM_WORLD.rank != 0:
            return
        _print(res)
        if json_out is not None:
            from qhdesign.io import atomic_write_json

            atomic_write_json(json_out, {"stack_file": str(stack_file), **res.to_dict()})
        if plot is not None:
            from qhdesign.plotting import save_figure, use_agg

            use_agg()
            from qhdesign.plotting.island import plot_island

            save_figure(plot_island(res), plot)
        for p in (json_out, plot):
            if p is not None:
                typer.echo(f"wrote {p}")
