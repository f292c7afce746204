"""``qhdesign layout``: a gate layout on a stack in 3D (distributed under ``mpiexec``).

The 1D stage places the wells; the 3D Thomas–Fermi model is solved at the layout's gate voltages
(``--gate NAME=V`` overrides one); the electronic island, the constriction states and the plunger
lever arms are read off. Under ``mpiexec -n N`` the mesh is partitioned and every linear solve is
CG + GAMG; only rank 0 prints and writes JSON and figures; XDMF fields are written collectively.
"""

from __future__ import annotations

from pathlib import Path

import typer

from .common import guarded, option_quantity


def _print(res) -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(width=110)
    info = res.info
    console.print(
        f"[bold]{res.layout.name}[/bold]: {info['dofs']} dofs ({info['plane_nodes']} plane nodes x "
        f"{info['levels']} levels) on {info['ranks']} rank(s); Newton {info['newton_iterations']} "
        f"iterations"
    )
    console.print(
        f"electronic island: A = {res.island_area_m2 * 1e12:.4g} um^2, equivalent radius "
        f"{res.electronic_radius_m * 1e9:.0f} nm"
    )
    if res.constrictions:
        t = Table(title="constrictions (lowest density along the path, cm^-2)")
        t.add_column("constriction")
        for n in res.sheet_names:
            t.add_column(n, justify="right")
        for c in res.constrictions:
            t.add_row(
                c.name,
                *(f"{s} ({m * 1e-4:.3g})" for s, m in zip(c.state, c.min_density_m2, strict=True)),
            )
        console.print(t)
    d = res.to_dict()
    for name, p in d["plungers"].items():
        line = (
            f"plunger {name}: dA/dV = {p['dA_I_dV_m2_per_V'] * 1e12:.4g} um^2/V, period "
            f"Phi0/|dA/dV| = {p['plunger_period_V_T'] * 1e3:.4g} mV T"
        )
        if "plunger_period_V" in p:
            line += f" = {p['plunger_period_V'] * 1e3:.4g} mV at {res.field_T:g} T"
        console.print(line)
    if res.response is not None:
        ueV = 1e-6 * 1.602176634e-19
        st = d["strip"]
        console.print(
            f"island at {d['response_field_T']:.4g} T (centre filling "
            f"{d['primary_filling']:.4g}): interfering edge A_I = {st['A_I_m2'] * 1e12:.4g} um^2, "
            f"A_L = {d['A_L_m2'] * 1e12:.4g} um^2, compressible strip "
            f"{d['compressible_strip_width_m'] * 1e9:.1f} nm"
        )
        console.print(
            f"K_I = {d['K_I_J'] / ueV:.4g} ueV (edge term {d['K_I_edge_term_J'] / ueV:.3g}), "
            f"K_L = {d['K_L_J'] / ueV:.4g} ueV, K_IL = {d['K_IL_J'] / ueV:.4g} ueV, "
            f"K_IL/K_I = {d['K_IL_over_K_I']:.4g}, E_C = {d['charging_energy_J'] / ueV:.4g} ueV"
        )


def _parse_gates(items: list[str]) -> dict[str, float]:
    from qhdesign.errors import InputError

    out = {}
    for it in items:
        if "=" not in it:
            raise InputError(
                f"'{it}': expected NAME=VOLTAGE, e.g. fp_plunger_upper=-0.5V",
                source="option --gate",
            )
        name, val = it.split("=", 1)
        out[name.strip()] = option_quantity(val, "voltage", "--gate")
    return out


#: Error keys of the physics (argument names) -> this command's options.
LAYOUT_OPTIONS = {
    "filling": "--filling",
    "gap_J": "--gap",
    "gap_kind": "--gap-kind",
    "bulk_shape": "--bulk-charge",
    "quantum_lifetime_s": "--quantum-lifetime",
    "field_T": "--field",
}


def register(app: typer.Typer) -> None:
    @app.command("layout")
    @guarded(options=LAYOUT_OPTIONS)
    def layout(
        stack_file: Path = typer.Argument(..., help="Layer-stack TOML file."),
        layout_file: Path = typer.Argument(..., help="Gate-layout TOML file."),
        gate: list[str] = typer.Option(
            [], "--gate", help="Override a gate voltage: NAME=VOLTAGE (repeatable)."
        ),
        field: str | None = typer.Option(
            None,
            "--field",
            help="Magnetic field, e.g. '5 T': the plunger period in volts and, with --gap, the "
            "field of the island figures (default there: the primary's 1D density at --filling).",
        ),
        gap: str | None = typer.Option(
            None,
            "--gap",
            help="Gap of the filling, e.g. '120 ueV': also compute the island's K_I, K_L, K_IL "
            "and charging energy (linear response on the 3D mesh).",
        ),
        filling: str = typer.Option("1/3", "--filling", help="Laughlin filling 1/m (with --gap)."),
        gap_kind: str = typer.Option(
            "quasiparticle", "--gap-kind", help="Which gap --gap is: quasiparticle or activation."
        ),
        quantum_lifetime: str | None = typer.Option(
            None,
            "--quantum-lifetime",
            help="One quantum lifetime for every well's Landau width (default: 1D estimate).",
        ),
        bulk_charge: str = typer.Option(
            "uniform", "--bulk-charge", help="Shape of the bulk's charge: uniform or parabolic."
        ),
        strip_mesh: bool = typer.Option(
            True,
            "--strip-mesh/--no-strip-mesh",
            help="With --gap: solve again on a mesh with node rows along the strip (default).",
        ),
        refine: float = typer.Option(1.0, "--refine", help="Mesh refinement factor (1 = default)."),
        lever_arm: bool = typer.Option(
            True, "--lever-arm/--no-lever-arm", help="Compute dA/dV for every plunger."
        ),
        json_out: Path | None = typer.Option(None, "--json", help="Write results as JSON (SI)."),
        fields: Path | None = typer.Option(
            None, "--fields", help="Write the potential and permittivity to XDMF (ParaView)."
        ),
        plot: Path | None = typer.Option(
            None, "--plot", help="Write the per-well density maps (PNG/SVG/PDF)."
        ),
    ) -> None:
        """Electronic island, constrictions and plunger lever arm of LAYOUT_FILE on STACK_FILE."""
        from scipy import constants as sc

        from qhdesign.errors import InputError
        from qhdesign.fem.backend import load
        from qhdesign.fem.grid import check_refine
        from qhdesign.layout import load_layout
        from qhdesign.layout.layoutfile import check_voltage
        from qhdesign.layout.model3d import Layout3DOptions
        from qhdesign.layout.stage import solve_layout
        from qhdesign.stack import load_stack

        check_refine(refine, source="option --refine")
        if fields is not None and fields.suffix.lower() != ".xdmf":
            raise InputError(
                "fields are written as XDMF: give a .xdmf file", source="option --fields"
            )
        field_T = option_quantity(field, "field", "--field")
        stack = load_stack(stack_file)
        lay = load_layout(layout_file, stack)
        volts = _parse_gates(gate)
        barrier = stack.surface.barrier / sc.e
        for name, v in volts.items():
            lay.gate(name)
            check_voltage(v, name, "option --gate", barrier, stack.source)
        lay = lay.with_voltages(volts)
        settings = None
        if gap is not None:
            from qhdesign.island.stage import OperatingSettings
            from qhdesign.island_options import parse_filling

            kw = {
                "filling": parse_filling(filling, key="filling"),
                "gap_J": option_quantity(gap, "energy", "--gap"),
                "gap_kind": gap_kind,
                "field_T": field_T,
                "bulk_shape": bulk_charge,
            }
            if quantum_lifetime is not None:
                kw["quantum_lifetime_s"] = option_quantity(
                    quantum_lifetime, "time", "--quantum-lifetime"
                )
            settings = OperatingSettings(**kw)
        res = solve_layout(
            stack,
            lay,
            Layout3DOptions(refine=refine),
            field_T=field_T,
            lever_arm=lever_arm,
            fields_path=fields,
            response=settings,
            resolve_strip=strip_mesh,
        )
        MPI, _ = load()
        if MPI.COMM_WORLD.rank != 0:
            return
        _print(res)
        if json_out is not None:
            from qhdesign.io import atomic_write_json

            atomic_write_json(
                json_out, {"stack_file": str(stack_file), "stack": stack.name, **res.to_dict()}
            )
        if plot is not None:
            from qhdesign.plotting import save_figure, use_agg

            use_agg()
            from qhdesign.plotting.layout import plot_layout

            save_figure(plot_layout(res), plot)
        for p in (json_out, fields, plot):
            if p is not None:
                typer.echo(f"wrote {p}")
