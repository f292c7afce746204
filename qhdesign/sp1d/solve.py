"""Stack-level 1D solve: donor freeze-out, then the self-consistent solve at the solve temperature.

1. Freeze-out: at ``stack.freeze_temperature`` the donors (and an exposed surface) are in
   equilibrium with the 2DEG, N+ = N / (1 + 2 exp((E_F - E_D)/kT)); the gate, if any, sits at the
   cool-down bias. The ionised-donor charge, and for ``surface.charge = "frozen"`` the surface
   charge, are then kept.
2. Solve at ``stack.temperature`` (or ``temperature``) and the gate voltage with that frozen
   charge. A pinned exposed surface stays at E_c(0) - E_F = barrier.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from scipy import constants as sc

from ..errors import InputError
from .analysis import build_results
from .model import DeviceLayout, build_device, top_boundary
from .options import BandsOptions
from .results import BandsResult
from .selfconsistent import State, solve_device

__all__ = ["FrozenCharge", "freeze_out", "solve_bands"]


@dataclass(frozen=True)
class FrozenCharge:
    """Charge frozen at the donor freeze-out.

    Attributes
    ----------
    layout
        The device layout it was computed on.
    donor_charge_C_m2
        Ionised-donor charge of every control volume, shape (N+1,).
    donor_fraction_cell
        Ionised fraction of each cell's donors, shape (N,).
    surface_charge_C_m2
        Charge on the top boundary at freeze-out (surface states of an exposed surface).
    cool_bias_V
        Gate bias during the cool-down.
    temperature_K
        Freeze-out temperature.
    state
        The full freeze-out solution.
    """

    layout: DeviceLayout
    donor_charge_C_m2: np.ndarray
    donor_fraction_cell: np.ndarray
    surface_charge_C_m2: float
    cool_bias_V: float
    temperature_K: float
    state: State


def _check_temperature(t: float, what: str) -> float:
    if t is None or not math.isfinite(t) or t <= 0.0:
        raise InputError(f"temperature must be above 0 K (10 mK to 400 K), got {t} K", key=what)
    if t > 400.0:
        raise InputError(f"temperature must be at most 400 K, got {t} K", key=what)
    return float(t)


def check_gate_voltage(stack, v: float, option: str = "gate voltage") -> float:
    """Refuse gate voltages the model cannot describe (one-line :class:`InputError`)."""
    if v is None or not math.isfinite(v):
        raise InputError(f"gate voltage must be a finite number, got {v}", key=option)
    surf = stack.surface
    vmax = surf.barrier / sc.e
    # the option is what is wrong; the limit comes from the stack's surface.barrier
    src = f"option {option}" if option.startswith("--") else stack.source
    key = None if option.startswith("--") else "surface.barrier"
    if v >= vmax:
        raise InputError(
            f"{option} {v:+.3f} V is past the Schottky barrier ({vmax:.3f} eV, surface.barrier "
            f"of {stack.source}): the gate would inject current; allowed below {vmax:+.3f} V",
            source=src,
            key=key,
        )
    if v < -20.0:
        raise InputError(
            f"{option} {v:+.3f} V is below -20 V (dielectric breakdown range); allowed "
            f"-20 V to {vmax:+.3f} V",
            source=src,
            key=key,
        )
    return float(v)


def freeze_out(stack, options: BandsOptions | None = None, *, cool_bias: float | None = None):
    """Solve the stack at its freeze-out temperature and freeze the donor (and surface) charge."""
    opts = options or BandsOptions()
    cb = opts.cool_bias_V if cool_bias is None else cool_bias
    cb = check_gate_voltage(stack, cb, "cool bias")
    tf = _check_temperature(stack.freeze_temperature, "wafer.freeze_temperature")
    layout = build_device(stack, grid=opts.grid, margin_m=opts.quantum_margin_m)
    dev = layout.device.with_boundaries(top=top_boundary(stack, cb, pinned=True, gated=True))
    layout = replace(layout, device=dev)
    _check_can_hold_charge(stack, layout)
    st = solve_device(dev, tf, options=opts.solve)
    return FrozenCharge(
        layout=layout,
        donor_charge_C_m2=st.donor_charge_C_m2,
        donor_fraction_cell=st.donor_fraction_cell,
        surface_charge_C_m2=st.top_charge_C_m2,
        cool_bias_V=cb,
        temperature_K=tf,
        state=st,
    )


def _check_can_hold_charge(stack, layout: DeviceLayout) -> None:
    dev = layout.device
    donors = float(np.sum(dev.donors_m3 * dev.h))
    if donors > 1e18:  # 1e14 cm^-2
        raise InputError(
            f"total doping {donors * 1e-4:.3g} cm^-2 is absurd; allowed up to 1e14 cm^-2 "
            "(typical modulation doping: 1e11 to 1e13 cm^-2)",
            source=stack.source,
            key="doping",
        )


def solve_at(
    stack,
    frozen: FrozenCharge,
    gate_voltage: float,
    temperature: float,
    options: BandsOptions,
    *,
    phi_guess: np.ndarray | None = None,
    count_hint: int = 0,
    gated: bool = False,
    warm_psi: np.ndarray | None = None,
) -> State:
    """One solve with the frozen charge at ``gate_voltage`` and ``temperature``.

    ``gated=True`` on an exposed surface lays a metal gate (same barrier) on it. The first
    eigen-solve starts from ``warm_psi`` (full-grid wavefunctions, shape (S, N+1)) or the
    freeze-out subbands; this changes only the speed (see
    :func:`~qhdesign.sp1d.schrodinger.refine_subbands`).
    """
    surf = stack.surface
    layout = frozen.layout
    if gated:
        top = top_boundary(stack, gate_voltage, pinned=True, gated=True)
    elif surf.kind == "exposed" and surf.charge == "frozen":
        top = top_boundary(stack, 0.0, pinned=False, frozen_charge_C_m2=frozen.surface_charge_C_m2)
    else:
        top = top_boundary(stack, gate_voltage, pinned=True)
    dev = layout.device.with_boundaries(top=top)
    try:
        return _solve_frozen(dev, temperature, frozen, phi_guess, options, count_hint, warm_psi)
    except InputError as exc:  # name the stack file the refusal is about
        if exc.source is None:
            raise InputError(exc.message, source=stack.source, key=exc.key) from None
        raise


def _solve_frozen(dev, temperature, frozen, phi_guess, options, count_hint, warm_psi):
    q0, q1 = frozen.layout.device.quantum
    guess = frozen.state.phi_V if phi_guess is None else phi_guess
    return solve_device(
        dev,
        temperature,
        frozen_donors=frozen.donor_charge_C_m2,
        phi_guess=guess,
        options=options.solve,
        count_hint=count_hint,
        warm_psi=(frozen.state.psi if warm_psi is None else warm_psi)[:, q0 : q1 + 1],
    )


def solve_bands(
    stack,
    *,
    gate_voltage: float | None = None,
    temperature: float | None = None,
    options: BandsOptions | None = None,
    frozen: FrozenCharge | None = None,
) -> BandsResult:
    """Self-consistent 1D Schrödinger–Poisson solution of ``stack``.

    Parameters
    ----------
    stack
        A :class:`qhdesign.stack.Stack`.
    gate_voltage
        Gate bias (V); default ``stack.surface.bias``. Only for ``surface.kind = "gate"``.
    temperature
        Solve temperature (K); default ``stack.temperature``.
    options
        :class:`~qhdesign.sp1d.options.BandsOptions`.
    frozen
        A freeze-out state from :func:`freeze_out` to reuse (sweeps); computed if omitted.

    Returns
    -------
    BandsResult

    Raises
    ------
    InputError
        Bad temperature, gate voltage, doping, or a stack whose wells cannot hold charge.
    ConvergenceError
        The self-consistent loop did not converge (residual history attached).

    Examples
    --------
    >>> from qhdesign.stack import load_stack
    >>> res = solve_bands(load_stack("stacks/ql2403_heterojunction.toml"))
    >>> res.converged, [w.name for w in res.wells]
    (True, ['channel'])
    >>> 0.0 < res.primary.sheet_density_m2  # electrons in the channel
    True

    References
    ----------
    A. Trellakis et al., J. Appl. Phys. 81, 7880 (1997) (predictor–corrector iteration);
    D. J. BenDaniel and C. B. Duke, Phys. Rev. 152, 683 (1966) (mass boundary condition).
    """
    opts = options or BandsOptions()
    t = _check_temperature(stack.temperature if temperature is None else temperature, "temperature")
    exposed = stack.surface.kind == "exposed"
    gated = exposed and gate_voltage is not None
    v = stack.surface.bias if gate_voltage is None else gate_voltage
    v = check_gate_voltage(stack, v, "gate voltage")
    if frozen is None:
        frozen = freeze_out(stack, opts)
    if t >= frozen.temperature_K:
        # at or above the freeze-out temperature the donors stay in equilibrium
        same = t == frozen.temperature_K and v == frozen.cool_bias_V
        st = frozen.state if same else None
        if st is None:
            top = top_boundary(stack, v, pinned=True, gated=True)
            dev = frozen.layout.device.with_boundaries(top=top)
            st = solve_device(dev, t, options=opts.solve, phi_guess=frozen.state.phi_V)
        fraction = st.donor_fraction_cell
    else:
        st = solve_at(stack, frozen, v, t, opts, gated=gated)
        fraction = frozen.donor_fraction_cell
    return assemble(stack, frozen, st, v, opts, fraction, gated=gated)


#: Printed (once) whenever a gate voltage is applied to a stack with a bare surface.
METAL_GATE_NOTE = (
    "this stack has a bare surface, so the gate is modelled as metal laid directly on the top "
    "layer (Schottky barrier = surface.barrier, no dielectric between); under the metal the bare "
    "surface's frozen charge no longer acts on the wells. If your gate sits on a dielectric, add "
    "it to the stack file"
)


def assemble(
    stack,
    frozen: FrozenCharge,
    st: State,
    v: float,
    opts: BandsOptions,
    fraction,
    *,
    tunnel: bool = True,
    gated: bool = False,
) -> BandsResult:
    """Package a converged state as a :class:`BandsResult`."""
    layout = frozen.layout
    dev = layout.device
    surf = stack.surface
    if surf.kind == "exposed" and surf.charge == "frozen" and st is not frozen.state and not gated:
        surface_charge = frozen.surface_charge_C_m2
    else:
        surface_charge = st.top_charge_C_m2
    subs, wells, doping, flags, fixed, others = build_results(
        stack,
        layout,
        st,
        donor_fraction_cell=np.nan_to_num(fraction, nan=1.0),
        surface_charge_C_m2=surface_charge,
        options=opts,
        gate_voltage=v,
        with_tunnel=tunnel,
    )
    warn = list(getattr(stack, "warnings", ()))
    if gated:
        warn.append(METAL_GATE_NOTE)
    if flags.forward_leakage:
        warn.append(
            f"gate voltage {v:+.3f} V is above the forward-bias limit "
            f"{opts.forward_limit_V:+.3f} V: expect gate leakage"
        )
    if flags.parallel_conduction:
        held = dict(others)
        held.update({d.name: d.electrons_m2 for d in doping})
        text = ", ".join(f"{n} ({held[n] * 1e-4:.3g} cm^-2)" for n in flags.parallel_layers)
        warn.append(f"parallel conduction in {text}")
    if all(w.sheet_density_m2 < 1e12 for w in wells):
        warn.append("no well holds charge (all below 1e8 cm^-2)")
    h = dev.h
    balance = st.charge_balance_C_m2
    return BandsResult(
        stack_name=stack.name,
        source=str(stack.source),
        temperature_K=st.temperature_K,
        freeze_temperature_K=frozen.temperature_K,
        gate_voltage_V=float(v),
        cool_bias_V=frozen.cool_bias_V,
        surface_kind="gate on exposed surface" if gated else surf.kind,
        converged=True,
        iterations=st.iterations,
        residuals_V=st.residuals,
        z_m=dev.z.copy(),
        conduction_band_J=st.U_J.copy(),
        electron_density_m3=st.n_quantum_m3 + st.n_classical_m3,
        psi=st.psi,
        subbands=subs,
        wells=wells,
        doping=doping,
        surface_charge_C_m2=float(surface_charge),
        bottom_charge_C_m2=float(st.bottom_charge_C_m2),
        charge_balance_m2=float(balance / sc.e),
        charge_balance_relative=float(balance / max(st.positive_charge_C_m2, 1e-30)),
        flags=flags,
        cell_centres_m=dev.centres.copy(),
        fixed_charge_C_m3=fixed,
        grid_min_spacing_m=float(h.min()),
        grid_max_spacing_m=float(h.max()),
        quantum_region_m=(float(dev.z[dev.quantum[0]]), float(dev.z[dev.quantum[1]])),
        warnings=tuple(warn),
        other_layers_electrons_m2=others,
    )
