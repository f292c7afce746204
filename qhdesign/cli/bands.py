"""``qhdesign bands``, ``qhdesign gate`` and ``qhdesign calibrate``: the 1D Schrödinger–Poisson
stage on the command line. Results are computed completely before anything is written."""

from __future__ import annotations

import math
from pathlib import Path

import typer

from . import disorder as D
from .common import JsonOut, StackFile, Temperature, guarded, option_quantity, renamed, warn


def _load(stack_file: Path):
    from qhdesign.stack import load_stack

    stack = load_stack(stack_file)
    for w in stack.warnings:
        warn(w)
    return stack


def _temperature(value: str | None, stack=None):
    """A solve-temperature option, under the stack file's rules (above 0 K, at most 400 K and at
    most the donor freeze-out temperature)."""
    if value is None:
        return None
    from qhdesign.limits import check_solve_temperature

    t = option_quantity(value, "temperature", "--temperature")
    freeze = stack.freeze_temperature if stack is not None else 400.0
    return check_solve_temperature(t, freeze, key="temperature")


#: Argument names of the 1D physics (error keys) -> options of ``bands``, ``gate``, ``calibrate``.
BANDS_OPTIONS = {"gate_voltage": "--gate-voltage", "temperature": "--temperature", "field_T": "--field"}
GATE_OPTIONS = {
    "v_from": "--from",
    "v_to": "--to",
    "step": "--step",
    "cool_bias": "--cool-bias",
    "temperature": "--temperature",
}
CALIBRATE_OPTIONS = {
    "well": "--well",
    "parameter": "--parameter",
    "bracket": "--range",
    "measured": "--density",
}


def _e2_text(e2_J: float, occupied: bool, primary_empty: bool = False) -> str:
    """The second-subband flag line; a value that could not be computed is never called ok."""
    from scipy import constants as sc

    if math.isnan(e2_J):
        return "second subband of the primary: not computed (no bound second level) [CHECK]"
    head = f"second subband of the primary: E2 - EF = {e2_J / sc.e * 1e3:.2f} meV"
    if occupied:
        return head + " [OCCUPIED or within margin]"
    return head + (" (primary empty)" if primary_empty else " (ok)")


def _print_bands(r) -> None:
    from rich.console import Console
    from rich.table import Table
    from scipy import constants as sc

    console = Console(width=110)
    console.print(
        f"[bold]{r.stack_name}[/bold]: T = {r.temperature_K:g} K, gate {r.gate_voltage_V:+.3f} V "
        f"({r.surface_kind}), converged in {r.iterations} iterations, charge balance "
        f"{r.charge_balance_relative:.1e} (relative)"
    )
    t = Table(title="wells (top to bottom)")
    for col in ("well", "role", "density (cm^-2)", "centroid (nm)", "E1 - EF (meV)", "nu"):
        t.add_column(col, justify="left" if col in ("well", "role") else "right")
    for w in r.wells:
        t.add_row(
            w.name,
            w.role,
            f"{w.sheet_density_m2 * 1e-4:.4g}",
            f"{w.centroid_m * 1e9:.2f}",
            f"{w.lowest_subband_J / sc.e * 1e3:.3f}",
            "" if math.isnan(w.filling_factor) else f"{w.filling_factor:.2f}",
        )
    console.print(t)
    s = Table(title="subbands (energies relative to the Fermi level)")
    for col in ("#", "E - EF (meV)", "well", "in well", "density (cm^-2)"):
        s.add_column(col, justify="right")
    for i, sb in enumerate(r.subbands):
        s.add_row(
            str(i + 1),
            f"{sb.energy_J / sc.e * 1e3:.3f}",
            sb.well,
            f"{sb.fraction_in_well:.3f}",
            f"{sb.sheet_density_m2 * 1e-4:.3g}",
        )
    console.print(s)
    for d in r.doping:
        console.print(
            f"doping {d.name}: {d.donors_m2 * 1e-4:.3g} cm^-2 donors, "
            f"{d.ionized_fraction:.3f} ionised (frozen), "
            f"{d.electrons_m2 * 1e-4:.3g} cm^-2 electrons"
        )
    console.print(f"surface charge: {r.surface_charge_C_m2 / sc.e * 1e-4:+.4g} e cm^-2")
    f = r.flags
    prim = next(w for w in r.wells if w.role == "primary")
    lines = [
        f"primary well: {prim.sheet_density_m2 * 1e-4:.3g} cm^-2"
        + (" [EMPTY: no usable channel]" if f.primary_empty else " (ok)"),
        _e2_text(f.e2_minus_ef_J, f.second_subband_occupied, f.primary_empty),
        "parallel conduction: "
        + (", ".join(f.parallel_layers) if f.parallel_conduction else "none"),
        "donor supply margin: "
        + f"{f.donor_supply_margin_m2 * 1e-4:.3g} cm^-2"
        + (" [LOW]" if f.donor_supply_low else ""),
    ]
    for k, v in f.tunnel_splittings_J.items():
        lines.append(f"tunnel splitting {k}: {v / sc.e * 1e6:.3g} ueV")
    if f.poor_screening:
        lines.append(
            "poor screening (filling near an integer): " + ", ".join(f.poor_screening_wells)
        )
    for line in lines:
        console.print(line)
    for w in r.warnings:
        warn(w)


def register(app: typer.Typer) -> None:
    @app.command("bands")
    @guarded(options=BANDS_OPTIONS)
    def bands(
        stack_file: StackFile,
        gate: str | None = typer.Option(
            None, "--gate-voltage", help="Gate voltage (V; default: the stack's bias)."
        ),
        gate_old: str | None = typer.Option(None, "--gate", hidden=True),
        temperature: Temperature = None,
        field: str | None = typer.Option(
            None, "--field", help='Perpendicular field for the filling-factor flag, e.g. "3 T".'
        ),
        json_out: JsonOut = None,
        plot: Path | None = typer.Option(None, "--plot", help="Write the band diagram."),
        background: str | None = typer.Option(None, "--background", help=D.BACKGROUND_HELP),
        roughness_height: str | None = typer.Option(
            None, "--roughness-height", help=D.ROUGH_H_HELP
        ),
        roughness_length: str | None = typer.Option(
            None, "--roughness-length", help=D.ROUGH_L_HELP
        ),
        min_mobility: str | None = typer.Option(None, "--min-mobility", help=D.MIN_MOB_HELP),
    ) -> None:
        """Self-consistent subbands and the charge in each well (donors frozen at freeze-out),
        with a disorder estimate per well (mobility, quantum lifetime, level broadening)."""
        from qhdesign.sp1d import BandsOptions, solve_bands
        from qhdesign.sp1d.scattering import scattering

        dis = D.disorder_options(background, roughness_height, roughness_length, min_mobility)
        stack = _load(stack_file)
        from qhdesign.limits import check_field

        gate = renamed(gate, gate_old, "--gate-voltage", "--gate")
        v = option_quantity(gate, "voltage", "--gate-voltage")
        t = _temperature(temperature, stack)
        b = check_field(option_quantity(field, "field", "--field"))
        r = solve_bands(stack, gate_voltage=v, temperature=t, options=BandsOptions(field_T=b))
        sr = scattering(r, dis)
        _print_bands(r)
        from rich.console import Console

        D.print_disorder(sr, Console(width=110))
        if json_out is not None:
            from qhdesign.io import atomic_write_json

            atomic_write_json(json_out, sr.merge_into(r.to_dict()))
            typer.echo(f"wrote {json_out}")
        if plot is not None:
            from qhdesign.plotting import save_figure
            from qhdesign.plotting.bands import plot_bands

            save_figure(plot_bands(r), plot)
            typer.echo(f"wrote {plot}")

    @app.command("gate")
    @guarded(options=GATE_OPTIONS)
    def gate_cmd(
        stack_file: StackFile,
        v_from: str = typer.Option(..., "--from", help="First gate voltage (V)."),
        v_to: str = typer.Option(..., "--to", help="Last gate voltage (V)."),
        step: str = typer.Option(..., "--step", help="Voltage step (V)."),
        cool_bias: str = typer.Option("0", "--cool-bias", help="Gate bias during cool-down (V)."),
        temperature: Temperature = None,
        forward_limit: str = typer.Option(
            "0.5", "--forward-limit", help="Warn about gate leakage above this voltage (V)."
        ),
        csv_out: Path | None = typer.Option(None, "--csv", help="Write density vs voltage CSV."),
        json_out: JsonOut = None,
        plot: Path | None = typer.Option(None, "--plot", help="Write density vs gate voltage."),
    ) -> None:
        """Gate sweep with frozen donors: density per well, depletion thresholds, slopes."""
        from qhdesign.sp1d import BandsOptions, gate_response

        stack = _load(stack_file)
        a = option_quantity(v_from, "voltage", "--from")
        b = option_quantity(v_to, "voltage", "--to")
        s = option_quantity(step, "voltage", "--step")
        cb = option_quantity(cool_bias, "voltage", "--cool-bias")
        fl = option_quantity(forward_limit, "voltage", "--forward-limit")
        t = _temperature(temperature, stack)
        from qhdesign.sp1d.solve import check_gate_voltage

        check_gate_voltage(stack, cb, "cool_bias", "cool-down bias")
        g = gate_response(
            stack, a, b, s, cool_bias=cb, temperature=t, options=BandsOptions(forward_limit_V=fl)
        )
        typer.echo(
            f"{g.stack_name}: {len(g.voltages_V)} points from {g.voltages_V[0]:+.3f} V to "
            f"{g.voltages_V[-1]:+.3f} V at {g.temperature_K:g} K "
            f"(cool-down bias {g.cool_bias_V:+.3f} V)"
        )
        for name in g.well_names:
            th = g.thresholds_V[name]
            typer.echo(
                f"  threshold {name}: "
                + ("not reached in the sweep" if math.isnan(th) else f"{th:+.4f} V")
            )
        typer.echo(f"  depletion order: {', '.join(g.depletion_order) or '-'}")
        typer.echo(
            "  window (top screening well empty to primary empty): "
            + ("n/a" if math.isnan(g.window_V) else f"{g.window_V:.4f} V")
        )
        if g.segments:
            typer.echo(
                f"  (slopes below {SLOPE_FLOOR_CM2_V:g} cm^-2/V in magnitude shown as 0; "
                "the JSON keeps the raw values)"
            )
        for seg in g.segments:
            slopes = ", ".join(
                f"{k} {_slope_text(v)}" for k, v in seg["slope_m2_V"].items() if not math.isnan(v)
            )
            typer.echo(
                f"  dn/dV (cm^-2/V) from {seg['from_V']:+.3f} to {seg['to_V']:+.3f} V: {slopes}"
            )
        for w in g.warnings:
            warn(w)
        if csv_out is not None:
            from qhdesign.io import atomic_write_text

            atomic_write_text(csv_out, g.to_csv())
            typer.echo(f"wrote {csv_out}")
        if json_out is not None:
            from qhdesign.io import atomic_write_json

            atomic_write_json(json_out, g.to_dict())
            typer.echo(f"wrote {json_out}")
        if plot is not None:
            from qhdesign.plotting import save_figure
            from qhdesign.plotting.bands import plot_gate

            save_figure(plot_gate(g), plot)
            typer.echo(f"wrote {plot}")

    @app.command("calibrate")
    @guarded(options=CALIBRATE_OPTIONS)
    def calibrate_cmd(
        stack_file: StackFile,
        parameter: str | None = typer.Option(
            None,
            "--parameter",
            help="Stack parameter path to fit, e.g. surface.barrier (with --mobility: "
            "background, the default).",
        ),
        well: str | None = typer.Option(
            None, "--well", help="Well whose measurement is given (not with --hall-density)."
        ),
        density: str | None = typer.Option(
            None, "--density", help='Measured zero-bias sheet density, e.g. "2.1e11 cm^-2".'
        ),
        hall_density: str | None = typer.Option(
            None,
            "--hall-density",
            help='Measured total (Hall) density of all wells together, e.g. "4.7e11 cm^-2".',
        ),
        threshold: str | None = typer.Option(
            None, "--threshold", help="Measured depletion threshold of the well (V)."
        ),
        search_range: str | None = typer.Option(
            None,
            "--range",
            help='Search interval for the parameter, "LOW..HIGH" with units '
            '(e.g. "0.6 eV..0.8 eV"); default +-50% of its value.',
        ),
        toml_out: Path | None = typer.Option(
            None,
            "--toml",
            help="Write the calibrated stack file (TOML) here (not with --mobility).",
        ),
        out: Path | None = typer.Option(None, "--out", hidden=True),
        json_out: Path | None = typer.Option(None, "--json", help="Write the fit as JSON."),
        mobility: str | None = typer.Option(
            None,
            "--mobility",
            help='Measured mobility of --well, e.g. "1.2e6 cm^2/Vs": fits the background '
            "impurity density of the disorder estimate (use it as bands --background).",
        ),
    ) -> None:
        """Fit one stack parameter to a measured density or threshold and write the new stack;
        or fit the background impurity density to a measured mobility."""
        from qhdesign.errors import InputError
        from qhdesign.sp1d import calibrate

        out = renamed(toml_out, out, "--toml", "--out")
        given = [x is not None for x in (density, hall_density, threshold, mobility)]
        if sum(given) != 1:
            raise InputError(
                "give exactly one of --density, --hall-density or --threshold (or --mobility)",
                source="options",
            )
        if well is None and hall_density is None:
            raise InputError(
                "required: the well whose measurement is given", source="option --well"
            )
        if mobility is not None:
            D.calibrate_mobility(stack_file, parameter, well, mobility, out, json_out)
            return
        for value, option in ((parameter, "--parameter"), (out, "--toml")):
            if value is None:
                raise InputError(
                    "required with --density, --hall-density or --threshold",
                    source=f"option {option}",
                )
        stack = _load(stack_file)
        if density is not None:
            target, measured = "density", option_quantity(density, "sheet_density", "--density")
        elif hall_density is not None:
            target = "total"
            measured = option_quantity(hall_density, "sheet_density", "--hall-density")
        else:
            target, measured = "threshold", option_quantity(threshold, "voltage", "--threshold")
        bracket = None
        if search_range is not None:
            bracket = _parse_range(search_range, stack, parameter)
        res = calibrate(
            stack, parameter, target=target, well=well, measured=measured, bracket=bracket
        )
        from qhdesign.io import atomic_write_json, atomic_write_text
        from qhdesign.stackedit import edit_value, format_in_unit, unit_in_file

        # the stack file edited in place: comments kept, the value in the file's own unit
        text = Path(stack_file).read_text(encoding="utf-8")
        edited, written = edit_value(text, stack, parameter, res.fitted_value)
        was = format_in_unit(res.initial_value, unit_in_file(text, stack, parameter))
        unit = "V" if target == "threshold" else "cm^-2"
        what = "depletion threshold" if target == "threshold" else "density"
        typer.echo(
            f"{parameter}: {was} -> {written}; reproduces the measured {what} of {res.well}: "
            f"{format_in_unit(res.achieved, unit)} (measured {format_in_unit(res.measured, unit)}) "
            f"after {res.evaluations} solves"
        )
        atomic_write_text(out, edited)
        typer.echo(f"wrote {out}")
        if json_out is not None:
            atomic_write_json(json_out, res.to_dict())
            typer.echo(f"wrote {json_out}")


#: Display floor of the printed gate slopes (cm^-2/V): an empty well's slope is round-off
#: (e.g. 8e-173); 1e3 cm^-2/V is ~1e-8 of a typical 1e11 cm^-2/V slope.
SLOPE_FLOOR_CM2_V = 1e3


def _slope_text(slope_m2_V: float) -> str:
    """A slope in cm^-2/V for the terminal; magnitudes below the floor print as 0."""
    v = slope_m2_V * 1e-4
    return "0" if abs(v) < SLOPE_FLOOR_CM2_V else f"{v:.3g}"


def _parse_range(text: str, stack, parameter: str) -> tuple[float, float]:
    """``"LOW..HIGH"`` in the parameter's dimension (bare numbers for dimensionless ones)."""
    from qhdesign.errors import InputError
    from qhdesign.units import DIMENSIONS, parse_quantity

    parts = [p.strip() for p in text.split("..")]
    if len(parts) != 2:
        raise InputError('expected "LOW..HIGH", e.g. "0.6 eV..0.8 eV"', source="option --range")
    stack.get(parameter)  # validates the path
    out = []
    for p in parts:
        try:
            out.append(float(p))
            continue
        except ValueError:
            pass
        for dim in DIMENSIONS:
            try:
                out.append(parse_quantity(p, dim))
                break
            except InputError:
                continue
        else:
            raise InputError(f"cannot read '{p}' as a quantity", source="option --range")
    lo, hi = sorted(out)
    if not lo < hi:
        raise InputError("the range must have LOW < HIGH", source="option --range")
    return lo, hi
