"""``qhdesign interpret``: measured periods and phase jump -> K_IL/K_I, area, anyonic phase.

Values with uncertainties are given as ``"4.10 mT +- 0.05 mT"`` (or ``"4.10 +- 0.05 mT"``); the
uncertainty is one standard deviation and may be left out (exact). No FEM is involved.
"""

from __future__ import annotations

import math
import re

import typer

from .common import JsonOut, guarded

_PM = re.compile(r"\+/-|\+-|±")


def _split(text: str, option: str) -> tuple[str, str | None]:
    parts = _PM.split(str(text))
    if len(parts) > 2:
        from qhdesign.errors import InputError

        raise InputError(f"cannot read '{text}'; give 'value unit +- sigma unit'", source=option)
    a = parts[0].strip()
    b = parts[1].strip() if len(parts) == 2 else None
    if b is not None:
        # "4.10 +- 0.05 mT": the value borrows the uncertainty's unit
        unit_b = re.sub(r"^\s*[-+]?[\d.]+([eE][-+]?\d+)?", "", b).strip()
        if unit_b and re.fullmatch(r"[-+]?[\d.]+([eE][-+]?\d+)?", a):
            a = f"{a} {unit_b}"
    return a, b


def measured_quantity(text: str | None, dimension: str, option: str):
    """``"value unit +- sigma unit"`` -> :class:`qhdesign.interpretation.Measured` (SI)."""
    if text is None:
        return None
    from qhdesign.errors import InputError
    from qhdesign.interpretation import Measured
    from qhdesign.units import parse_quantity

    a, b = _split(text, f"option {option}")
    if dimension == "angle":
        v = _angle(a, option)
        s = 0.0 if b is None else _angle(b, option)
    elif dimension == "ratio":
        try:
            v = float(a)
            s = 0.0 if b is None else float(b)
        except ValueError:
            raise InputError(
                f"cannot read '{text}'; give a number like '0.9 +- 0.05'", source=f"option {option}"
            ) from None
    else:
        v = parse_quantity(a, dimension, source=f"option {option}")
        s = 0.0 if b is None else parse_quantity(b, dimension, source=f"option {option}")
    if s < 0:
        raise InputError("the uncertainty must be >= 0", source=f"option {option}")
    return Measured(v, s)


def _angle(text: str, option: str) -> float:
    from qhdesign.errors import InputError
    from qhdesign.units import registry

    try:
        q = registry().Quantity(text)
        if q.dimensionless and not q.unitless:
            return float(q.to("radian").magnitude)
        if q.unitless:
            raise ValueError
        return float(q.to("radian").magnitude)
    except Exception:  # pint's errors are many; all mean "not an angle with a unit"
        raise InputError(
            f"cannot read angle '{text}'; give a unit: rad, deg or turn (1 turn = 2 pi rad)",
            source=f"option {option}",
        ) from None


def _fmt(v, s, scale, unit, digits=4) -> str:
    if v is None:
        return "-"
    return f"{v * scale:.{digits}g} +- {s * scale:.2g} {unit}"


def register(app: typer.Typer) -> None:
    @app.command("interpret")
    @guarded(
        options={
            "filling": "--filling",
            "period_gate_V": "--gate-period",
            "field_T": "--field",
            "period_incompressible_T": "--period-incompressible",
        }
    )
    def interpret(
        period_compressible: str = typer.Option(
            ...,
            "--period-compressible",
            help="Field period where quasiparticles enter freely, e.g. '2.05 mT +- 0.02 mT'.",
        ),
        period_incompressible: str = typer.Option(
            ...,
            "--period-incompressible",
            help="Field period at fixed quasiparticle number, e.g. '6.9 mT +- 0.1 mT'.",
        ),
        filling: str = typer.Option("1/3", "--filling", help="Laughlin filling 1/m."),
        area_ratio: str | None = typer.Option(
            None, "--area-ratio", help="A_L/A_I, e.g. '0.9 +- 0.05' (default exactly 1)."
        ),
        gate_period: str | None = typer.Option(
            None, "--gate-period", help="Plunger-gate period (AB regime), e.g. '4.2 mV +- 0.1 mV'."
        ),
        field: str | None = typer.Option(
            None, "--field", help="Field of the gate-period measurement, e.g. '5.6 T'."
        ),
        jump: str | None = typer.Option(
            None,
            "--jump",
            help="Measured phase jump per added quasiparticle, e.g. '0.29 turn +- 0.02 turn' "
            "(units rad, deg or turn).",
        ),
        json_out: JsonOut = None,
    ) -> None:
        """K_IL/K_I, the effective area and the coupling-corrected anyonic phase from measured
        periods (with propagated uncertainties)."""
        from qhdesign.errors import InputError
        from qhdesign.interpretation import Measured, Measurement, interpret_measurement
        from qhdesign.island_options import parse_filling

        nu = parse_filling(filling, key="filling")
        try:
            from qhdesign.interferometer import check_filling

            check_filling(nu)
        except InputError as exc:
            raise InputError(exc.message, source="option --filling") from None
        m = Measurement(
            period_compressible_T=measured_quantity(
                period_compressible, "field", "--period-compressible"
            ),
            period_incompressible_T=measured_quantity(
                period_incompressible, "field", "--period-incompressible"
            ),
            filling=nu,
            area_ratio=measured_quantity(area_ratio, "ratio", "--area-ratio") or Measured(1.0),
            period_gate_V=measured_quantity(gate_period, "voltage", "--gate-period"),
            field_T=measured_quantity(field, "field", "--field"),
            jump_rad=measured_quantity(jump, "angle", "--jump"),
        )
        for name, q in (
            ("--period-compressible", m.period_compressible_T),
            ("--period-incompressible", m.period_incompressible_T),
            ("--area-ratio", m.area_ratio),
            ("--gate-period", m.period_gate_V),
        ):
            if q is not None and not q.value > 0:
                raise InputError(f"must be > 0, got {q.value:g} (SI)", source=f"option {name}")
        res = interpret_measurement(m)
        lines = [
            f"K_IL/K_I = {res['K_IL_over_K_I']:.4f} +- {res['K_IL_over_K_I_uncertainty']:.2g} "
            f"(regime {res['regime']}; A_L/A_I = {m.area_ratio.value:g})",
            f"A_I = {_fmt(res['A_I_m2'], res['A_I_uncertainty_m2'], 1e12, 'um^2')}, effective "
            "radius "
            + _fmt(res["effective_radius_m"], res["effective_radius_uncertainty_m"], 1e9, "nm"),
        ]
        if res["dA_I_dV_m2_per_V"] is not None:
            lines.append(
                "dA_I/dV = "
                + _fmt(res["dA_I_dV_m2_per_V"], res["dA_I_dV_uncertainty_m2_per_V"], 1e12, "um^2/V")
            )
        if res["anyonic_phase_rad"] is not None:
            th, s = res["anyonic_phase_rad"], res["anyonic_phase_uncertainty_rad"]
            lines.append(
                f"anyonic phase (jump / (1 - K_IL/K_I)) = {th / (2 * math.pi):.4f} +- "
                f"{s / (2 * math.pi):.2g} x 2 pi (Laughlin value {nu:.4g} x 2 pi)"
            )
        for line in lines:
            typer.echo(line)
        if json_out is not None:
            from qhdesign.io import atomic_write_json

            inputs = {
                "period_compressible_T": [
                    m.period_compressible_T.value,
                    m.period_compressible_T.sigma,
                ],
                "period_incompressible_T": [
                    m.period_incompressible_T.value,
                    m.period_incompressible_T.sigma,
                ],
                "area_ratio": [m.area_ratio.value, m.area_ratio.sigma],
                "period_gate_V": None
                if m.period_gate_V is None
                else [m.period_gate_V.value, m.period_gate_V.sigma],
                "field_T": None if m.field_T is None else [m.field_T.value, m.field_T.sigma],
                "jump_rad": None if m.jump_rad is None else [m.jump_rad.value, m.jump_rad.sigma],
            }
            atomic_write_json(json_out, {"inputs_value_sigma": inputs, **res})
            typer.echo(f"wrote {json_out}")
