"""CLI helpers of the disorder estimate (``bands`` and ``calibrate --mobility``): the options
with units, and the printed table. The physics is in :mod:`qhdesign.sp1d.scattering`."""

from __future__ import annotations

import math

import typer

from .common import option_quantity, warn

#: ScatteringOptions validation key -> the CLI option that set it.
OPTION_OF = {
    "background": "--background",
    "roughness_height": "--roughness-height",
    "roughness_length": "--roughness-length",
    "min_mobility": "--min-mobility",
}

BACKGROUND_HELP = (
    'Uniform charged background impurity density, e.g. "1e14 cm^-3" '
    "(default 1e14 cm^-3, common practice for good MBE material)."
)
ROUGH_H_HELP = 'RMS interface roughness height, e.g. "0.3 nm" (default: no roughness).'
ROUGH_L_HELP = 'Roughness correlation length (> 0), e.g. "10 nm"; needed with a height.'
MIN_MOB_HELP = (
    'Flag the primary well when its estimated mobility is below this, e.g. "1e6 cm^2/Vs" '
    "(default 1e6 cm^2/Vs, common practice)."
)


def disorder_options(background=None, roughness_height=None, roughness_length=None, min_mob=None):
    """A :class:`~qhdesign.sp1d.scattering.ScatteringOptions` from CLI strings with units.

    Raises
    ------
    InputError
        Naming the option and its allowed range (exit 2 through the CLI guard).
    """
    from qhdesign.errors import InputError
    from qhdesign.sp1d.scattering import ScatteringOptions

    kw = {}
    for value, dim, option, field in (
        (background, "volume_density", "--background", "background_m3"),
        (roughness_height, "length", "--roughness-height", "roughness_height_m"),
        (roughness_length, "length", "--roughness-length", "roughness_length_m"),
        (min_mob, "mobility", "--min-mobility", "min_mobility_m2_Vs"),
    ):
        v = option_quantity(value, dim, option)
        if v is not None:
            kw[field] = v
    try:
        return ScatteringOptions(**kw)
    except InputError as exc:
        raise InputError(exc.message, source=f"option {OPTION_OF.get(exc.key, exc.key)}") from None


def print_disorder(sr, console) -> None:
    """The per-well estimate as a table, then the low-mobility flag line."""
    from rich.table import Table
    from scipy import constants as sc

    t = Table(title="disorder estimate (Born, screened; ranks designs, not a Hall prediction)")
    cols = ("well", "mobility (cm^2/Vs)", "tau_t (ps)", "tau_q (ps)", "Gamma (ueV)", "largest")
    for col in cols:
        t.add_column(col, justify="left" if col in ("well", "largest") else "right")
    for w in sr.wells:
        if not w.sources:
            t.add_row(w.name, "-", "-", "-", "-", "empty")
            continue
        rt = sum(s.transport_rate_s for s in w.sources)
        top = max(w.sources, key=lambda s: s.transport_rate_s)
        t.add_row(
            w.name,
            f"{w.mobility_m2_per_Vs * 1e4:.3g}",
            f"{w.transport_lifetime_s * 1e12:.3g}",
            f"{w.quantum_lifetime_s * 1e12:.3g}",
            f"{w.level_broadening_J / sc.e * 1e6:.3g}",
            f"{top.name} ({top.transport_rate_s / rt:.0%})",
        )
    console.print(t)
    for w in sr.wells:
        rt = sum(s.transport_rate_s for s in w.sources)
        rq = sum(s.quantum_rate_s for s in w.sources)
        if rt > 0 and rq > 0:
            parts = ", ".join(
                f"{s.name} {s.transport_rate_s / rt:.0%} ({s.quantum_rate_s / rq:.0%})"
                for s in w.sources
            )
            console.print(f"{w.name} shares of 1/tau_t (1/tau_q): {parts}", soft_wrap=True)
    o = sr.options
    p = next((w for w in sr.wells if w.role == "primary"), None)
    if p is not None and not math.isnan(p.mobility_m2_per_Vs):
        console.print(
            f"primary mobility {p.mobility_m2_per_Vs * 1e4:.3g} cm^2/Vs vs threshold "
            f"{o.min_mobility_m2_Vs * 1e4:.3g} cm^2/Vs" + (" [LOW]" if sr.low_mobility else " (ok)")
        )
    for w in sr.warnings:
        warn(w)


def calibrate_mobility(stack_file, parameter, well, mobility, out, json_out) -> None:
    """``calibrate --mobility``: the background density reproducing one measured mobility."""
    from qhdesign.errors import InputError
    from qhdesign.io import atomic_write_json
    from qhdesign.sp1d import solve_bands
    from qhdesign.sp1d.scattering import DEFAULT_BACKGROUND_M3, fit_background
    from qhdesign.stack import load_stack

    if parameter not in (None, "background"):
        raise InputError(
            f"with --mobility the fitted parameter is the background impurity density; "
            f"got '{parameter}', allowed: background",
            source="option --parameter",
        )
    if out is not None:
        raise InputError(
            "the background density is an option of bands (--background), not a stack "
            "parameter: no stack is written; use --json for the fit",
            source="option --toml",
        )
    mu = option_quantity(mobility, "mobility", "--mobility")
    stack = load_stack(stack_file)
    for w in stack.warnings:
        warn(w)
    r = solve_bands(stack)
    try:
        nb, sr = fit_background(r, well, mu)
    except InputError as exc:
        from .common import translate

        options = {"well": "--well", "measured_mobility_m2_Vs": "--mobility"}
        raise translate(exc, options, set(options.values())) from None
    w = sr.well(well)
    typer.echo(
        f"background: fitted {nb * 1e-6:.4g} cm^-3 (default {DEFAULT_BACKGROUND_M3 * 1e-6:.3g} "
        f"cm^-3); {well} estimate {w.mobility_m2_per_Vs * 1e4:.6g} cm^2/Vs vs "
        f'measured {mu * 1e4:.6g} cm^2/Vs; use bands --background "{nb * 1e-6:.4g} cm^-3"'
    )
    if json_out is not None:
        atomic_write_json(
            json_out,
            {
                "parameter": "background",
                "fitted_value_m3": nb,
                "well": well,
                "measured_mobility_m2_per_Vs": mu,
                "achieved_mobility_m2_per_Vs": w.mobility_m2_per_Vs,
                "quantum_lifetime_s": w.quantum_lifetime_s,
                "level_broadening_J": w.level_broadening_J,
            },
        )
        typer.echo(f"wrote {json_out}")
