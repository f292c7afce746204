"""``qhdesign check STACK``: validate a stack file, print its layers, optionally draw them."""

from __future__ import annotations

from pathlib import Path

import typer

from .common import JsonOut, StackFile, guarded, warn


def register(app: typer.Typer) -> None:
    @app.command("check")
    @guarded
    def check(
        stack_file: StackFile,
        plot: Path | None = typer.Option(
            None, "--plot", help="Write a to-scale layer diagram (PNG/SVG/PDF by suffix)."
        ),
        json_out: JsonOut = None,
    ) -> None:
        """Validate STACK_FILE and print its layers and wells (exit 2 if it is invalid)."""
        from rich.console import Console
        from rich.table import Table
        from scipy import constants as sc

        from qhdesign.io import atomic_write_json
        from qhdesign.stack import load_stack

        stack = load_stack(stack_file)
        for w in stack.warnings:
            warn(w)
        console = Console(width=120)
        top = stack.surface
        top_text = (
            f"exposed surface, barrier {top.barrier / sc.e:.3f} eV, charge {top.charge}"
            if top.kind == "exposed"
            else f"gate, barrier {top.barrier / sc.e:.3f} eV, bias {top.bias:+.3f} V"
        )
        console.print(f"[bold]{stack.name}[/bold]  ({stack_file})")
        console.print(
            f"T = {stack.temperature:g} K, donor freeze-out {stack.freeze_temperature:g} K; "
            f"top: {top_text}; bottom: {stack.substrate.kind}"
        )
        table = Table(show_lines=False)
        for col in ("layer", "material", "x", "thickness (nm)", "top (nm)", "bottom (nm)"):
            table.add_column(col, justify="right" if "(" in col or col == "x" else "left")
        table.add_column("doping")
        table.add_column("well")
        for lay, prof in zip(stack.layers, stack.profile(), strict=True):
            dop = ""
            if lay.doping is not None:
                if lay.doping.kind == "sheet":
                    dop = f"{lay.doping.density * 1e-4:.3g} cm^-2 ({lay.doping.donor})"
                else:
                    dop = f"{lay.doping.density * 1e-6:.3g} cm^-3 ({lay.doping.donor})"
            table.add_row(
                lay.name,
                lay.material,
                f"{lay.x:.3f}",
                f"{lay.thickness * 1e9:.2f}",
                f"{prof.z_top * 1e9:.2f}",
                f"{prof.z_bottom * 1e9:.2f}",
                dop,
                lay.well or "",
            )
        console.print(table)
        wells = ", ".join(f"{w.name} ({w.well}, {w.thickness * 1e9:.1f} nm)" for w in stack.wells())
        console.print(f"wells, top to bottom: {wells}")
        if json_out is not None:
            atomic_write_json(json_out, stack.to_dict())
        if plot is not None:
            from qhdesign.plotting import save_figure
            from qhdesign.plotting.layers import plot_layers

            save_figure(plot_layers(stack), plot)
            typer.echo(f"wrote {plot}")
