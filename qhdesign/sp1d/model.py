"""Build the array :class:`~qhdesign.sp1d.device.Device` of a :class:`~qhdesign.stack.Stack`.

Grid: every layer boundary is a node; wells get at least ``GridSpec.well_points`` cells (and at
most ``well_spacing_m`` spacing), doped layers ``doping_spacing_m``; barriers are graded from the
fine spacing at their edges up to ``quantum_barrier_spacing_m`` inside the quantum region and
``barrier_spacing_m`` outside it. The quantum region spans the wells plus ``margin_m`` on each side
(clipped to the stack and kept out of doped layers); a thick well (a heterojunction channel) is
quantum only within ``thick_well_depth_m`` of its top interface.

Boundaries (electron potential energy U relative to the Fermi level of the grounded 2DEG):
a gate at bias V fixes U = barrier - eV on the metal (through the gate dielectric, if any); an
exposed surface is pinned at U = barrier while the donors freeze and then either keeps its charge
(``surface.charge = "frozen"``) or stays pinned; a deep substrate has zero field at the bottom of
the last layer; a back gate fixes U = barrier - eV there.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import constants as sc

from ..errors import InputError
from .device import Boundary, Device
from .grid import GridSpec, layered_grid

__all__ = ["DeviceLayout", "build_device"]


@dataclass(frozen=True)
class DeviceLayout:
    """A device plus the bookkeeping that maps it back onto the stack.

    Attributes
    ----------
    device
        The array problem.
    layer_names
        Names of the stack layers; ``device.layer_of_cell`` indexes into it (-1: dielectric).
    layer_z
        Layer boundaries, shape (L+1,), m.
    well_layers
        Indices of the well layers, top to bottom.
    doped_layers
        Indices of the doped layers.
    surface_node
        Node index of the semiconductor surface (z = 0).
    """

    device: Device
    layer_names: tuple[str, ...]
    layer_z: np.ndarray
    well_layers: tuple[int, ...]
    doped_layers: tuple[int, ...]
    surface_node: int


def build_device(
    stack,
    *,
    grid: GridSpec | None = None,
    margin_m: float = 20e-9,
    thick_well_depth_m: float = 120e-9,
) -> DeviceLayout:
    """Device of ``stack`` at zero bias with the top pinned (the freeze-out configuration).

    Use :meth:`Device.with_boundaries` and :func:`top_boundary` / :func:`bottom_boundary` for
    other biases.
    """
    spec = grid or GridSpec()
    prof = stack.profile()
    zb = np.array([p.z_top for p in prof] + [prof[-1].z_bottom])
    wells = tuple(i for i, p in enumerate(prof) if p.well is not None)
    doped = tuple(i for i, p in enumerate(prof) if p.donor_density > 0)
    if not wells:
        raise InputError("the stack has no quantum well", source=stack.source, key="layers")

    # quantum region
    q_top = zb[wells[0]] - margin_m
    last = wells[-1]
    thick_last = zb[last + 1] - zb[last] > thick_well_depth_m
    q_bot = zb[last] + thick_well_depth_m if thick_last else zb[last + 1] + margin_m
    # keep the region out of doped layers (their electrons are parallel conduction, counted
    # classically) but never closer than 5 nm to a well
    for i in doped:
        if zb[i + 1] <= zb[wells[0]] and zb[i + 1] > q_top:
            q_top = max(zb[i + 1], zb[wells[0]] - margin_m)
        if zb[i] >= zb[last + 1] and zb[i] < q_bot:
            q_bot = min(zb[i], q_bot)
    q_top = max(min(q_top, zb[wells[0]] - 5e-9), 0.0)
    if not thick_last:
        q_bot = max(q_bot, zb[last + 1] + 5e-9)
    q_bot = min(q_bot, zb[-1])

    # grid breakpoints: layer boundaries plus the quantum-region ends
    seg_z = np.unique(np.concatenate([zb, [q_top, q_bot]]))
    seg_layer = np.searchsorted(zb, seg_z[:-1], side="right") - 1
    n_seg = len(seg_z) - 1
    in_q = (seg_z[:-1] >= q_top - 1e-15) & (seg_z[1:] <= q_bot + 1e-15)
    max_h = np.empty(n_seg)
    for s in range(n_seg):
        p = prof[seg_layer[s]]
        length = seg_z[s + 1] - seg_z[s]
        if p.well is not None and in_q[s]:
            if length > 60e-9:  # thick channel: graded from its interfaces
                max_h[s] = 0.5 * spec.quantum_barrier_spacing_m
            else:
                max_h[s] = min(spec.well_spacing_m, length / spec.well_points)
        elif p.donor_density > 0:
            max_h[s] = min(spec.doping_spacing_m, length / 4)
        elif in_q[s]:
            max_h[s] = spec.quantum_barrier_spacing_m
        else:
            max_h[s] = spec.barrier_spacing_m
    edge = np.full(n_seg + 1, spec.interface_spacing_m)
    for s in range(n_seg):
        p = prof[seg_layer[s]]
        if p.well is not None and in_q[s]:
            fine = min(max_h[s], spec.well_spacing_m, (seg_z[s + 1] - seg_z[s]) / spec.well_points)
            fine = max(fine, 0.25 * spec.well_spacing_m) if max_h[s] > fine else fine
            edge[s] = min(edge[s], fine)
            edge[s + 1] = min(edge[s + 1], fine)
        if p.donor_density > 0:
            edge[s] = min(edge[s], max_h[s])
            edge[s + 1] = min(edge[s + 1], max_h[s])
    # barriers next to wells inside the quantum region: the wavefunction decays there over
    # ~1 nm and the levels' discretisation error comes mostly from these first nanometres, so
    # they keep a fine spacing over quantum_interface_flat_m before growing
    flat = np.zeros(n_seg)
    for s in range(n_seg):
        p = prof[seg_layer[s]]
        if in_q[s] and p.well is None and p.donor_density == 0:
            for end in (s, s + 1):
                touching = [t for t in (end - 1, end) if 0 <= t < n_seg and t != s]
                if any(prof[seg_layer[t]].well is not None and in_q[t] for t in touching):
                    edge[end] = min(edge[end], spec.quantum_interface_spacing_m)
                    flat[s] = spec.quantum_interface_flat_m
    z, seg_of_cell = layered_grid(seg_z, edge, max_h, spec.grading, flat)
    layer_of_cell = seg_layer[seg_of_cell]

    # gate dielectric above z = 0
    surf = stack.surface
    n_diel = 0
    if surf.kind == "gate" and surf.dielectric_thickness > 0:
        t = surf.dielectric_thickness
        n_diel = max(4, int(np.ceil(t / 1e-9)))
        zd = np.linspace(-t, 0.0, n_diel + 1)[:-1]
        z = np.concatenate([zd, z])
        layer_of_cell = np.concatenate([np.full(n_diel, -1), layer_of_cell])

    def per_cell(values, diel_value):
        arr = np.asarray(values, dtype=float)[np.maximum(layer_of_cell, 0)]
        return np.where(layer_of_cell < 0, diel_value, arr)

    offset = per_cell([p.band_offset for p in prof], prof[0].band_offset)
    mass = per_cell([p.mass for p in prof], 1.0)
    eps = per_cell(
        [p.permittivity for p in prof],
        surf.dielectric_permittivity if n_diel else 1.0,
    )
    donors = per_cell([p.donor_density for p in prof], 0.0)
    depth = per_cell(
        [np.inf if not np.isfinite(p.donor_level) else p.donor_level for p in prof], np.inf
    )
    semi = layer_of_cell >= 0
    q0 = int(np.argmin(np.abs(z - q_top)))
    q1 = int(np.argmin(np.abs(z - q_bot)))
    dev = Device(
        z=z,
        offset_J=offset,
        mass=mass,
        eps=eps,
        donors_m3=donors,
        donor_depth_J=depth,
        semiconductor=semi,
        quantum=(q0, q1),
        top=top_boundary(stack, 0.0, pinned=True),
        bottom=bottom_boundary(stack),
        layer_of_cell=layer_of_cell,
        xc=getattr(stack, "exchange_correlation", "none"),
    )
    return DeviceLayout(
        device=dev,
        layer_names=tuple(p.name for p in prof),
        layer_z=zb,
        well_layers=wells,
        doped_layers=doped,
        surface_node=n_diel,
    )


def top_boundary(
    stack,
    gate_voltage: float,
    *,
    pinned: bool,
    frozen_charge_C_m2: float = 0.0,
    gated: bool = False,
) -> Boundary:
    """Top boundary at ``gate_voltage`` (V).

    A gate (or, with ``gated=True``, a metal gate laid on an exposed surface, with the same
    barrier) fixes U = barrier - e V. An exposed surface is pinned at U = barrier, or with
    ``pinned=False`` is a Neumann boundary carrying ``frozen_charge_C_m2``.
    """
    surf = stack.surface
    if surf.kind == "gate" or gated:
        return Boundary("dirichlet", energy_J=surf.barrier - sc.e * gate_voltage)
    if pinned:
        return Boundary("dirichlet", energy_J=surf.barrier)
    return Boundary("neumann", charge_C_m2=frozen_charge_C_m2)


def bottom_boundary(stack) -> Boundary:
    """Bottom boundary of ``stack``."""
    sub = stack.substrate
    if sub.kind == "back_gate":
        return Boundary("dirichlet", energy_J=sub.barrier - sc.e * sub.bias)
    if sub.kind == "pinned":
        return Boundary("dirichlet", energy_J=sub.barrier)
    return Boundary("neumann")


def check_layout(layout: DeviceLayout) -> None:  # pragma: no cover - debugging aid
    dev = layout.device
    assert np.all(np.diff(dev.z) > 0)
    nl = len(layout.layer_names)
    assert dev.layer_of_cell.max() == nl - 1
