"""``qhdesign report``: a one-page design review of a stack as a self-contained HTML file."""

from __future__ import annotations

from pathlib import Path

import typer

from .common import guarded, option_quantity


def register(app: typer.Typer) -> None:
    @app.command("report")
    @guarded
    def report(
        stack_file: Path = typer.Argument(..., help="Layer-stack TOML file."),
        html_out: Path = typer.Option(
            ..., "--html", "-o", help="The review, one self-contained HTML file (e.g. review.html)."
        ),
        field: str | None = typer.Option(
            None, "--field", help="Perpendicular field, e.g. '2 T': fillings, strips, velocity."
        ),
        island: str | None = typer.Option(
            None, "--island", help="Electronic island radius, e.g. '1.15 um': adds the island."
        ),
        filling: str | None = typer.Option(
            None, "--filling", help="Laughlin filling of the island, e.g. 1/3."
        ),
        gap: str | None = typer.Option(
            None, "--gap-energy", help="Quasiparticle gap of the island filling, e.g. '120 ueV'."
        ),
        edge_gate: str | None = typer.Option(
            None,
            "--gate-voltage",
            help="Depletion-gate bias of the edge section (V): adds the edge.",
        ),
        gate_from: str = typer.Option("0.2", "--from", help="Gate sweep start (V)."),
        gate_to: str = typer.Option("-1.0", "--to", help="Gate sweep end (V)."),
        gate_step: str = typer.Option("0.02", "--step", help="Gate sweep step (V, > 0)."),
        electron_temperature: str | None = typer.Option(
            None,
            "--electron-temperature",
            help="Electron temperature shown beside E_C, e.g. '30 mK' (default: the stack's).",
        ),
        json_out: Path | None = typer.Option(
            None, "--json", help="Also write the numbers of the review as JSON (SI)."
        ),
    ) -> None:
        """One-page design review of STACK_FILE: stack, bands, flags, gate, edge, island."""
        from qhdesign.errors import InputError
        from qhdesign.io import atomic_write_json, atomic_write_text
        from qhdesign.report import ReportSettings, build_review, render_html
        from qhdesign.sp1d.solve import check_gate_voltage
        from qhdesign.stack import load_stack

        out = html_out
        if out.suffix.lower() not in (".html", ".htm"):
            raise InputError(
                f"the review is an HTML file; '{out.name}' does not end in .html",
                source="option --html",
            )
        b = None if field is None else option_quantity(field, "field", "--field")
        radius = option_quantity(island, "length", "--island")
        if radius is not None and not 0 < radius < 1e-3:
            raise InputError(
                f"{island} out of range; allowed 0 < radius < 1 mm", source="option --island"
            )
        if (filling or gap) and radius is None:
            raise InputError(
                "--filling and --gap-energy describe the island: give --island too",
                source="option --island",
            )
        t_e = option_quantity(electron_temperature, "temperature", "--electron-temperature")
        settings = ReportSettings(
            gate_from_V=option_quantity(gate_from, "voltage", "--from"),
            gate_to_V=option_quantity(gate_to, "voltage", "--to"),
            gate_step_V=option_quantity(gate_step, "voltage", "--step"),
            field_T=b,
            edge_gate_V=option_quantity(edge_gate, "voltage", "--gate-voltage"),
            island_radius_m=radius,
            filling=filling,
            gap=gap,
            electron_temperature_K=t_e,
        )
        stack = load_stack(stack_file)
        for value, option in (
            (settings.gate_from_V, "--from"),
            (settings.gate_to_V, "--to"),
        ):
            check_gate_voltage(stack, value, option)
        review = build_review(stack_file, settings)
        html = render_html(review)
        atomic_write_text(out, html)
        typer.echo(f"wrote {out}")
        if json_out is not None:
            atomic_write_json(json_out, review.to_dict())
            typer.echo(f"wrote {json_out}")
