"""Bare potential of surface gates (no electrons) against exact Laplace solutions.

Half-plane gate over x < 0 and a strip gate of width w, both on a pinned surface (phi = 0 on the
exposed part), in a semi-infinite uniform dielectric. The exact potential at depth z is
(analytic, Laplace equation in the half-plane; docs/derivations.md section 6, attributed to Davies,
Larkin, Sukhorukov, J. Appl. Phys. 77, 4504 (1995)):

    half-plane: phi = (V_g/pi) (pi/2 - arctan(x/z))
    strip:      phi = (V_g/pi) [arctan((x + w/2)/z) - arctan((x - w/2)/z)]

The finite domain gets the exact values on its sides and bottom; the check is on the line
z = d = 100 nm, at least d away from the gate corners, to 1e-4 V_g (tolerance from the issue).
"""

from __future__ import annotations

import numpy as np
import pytest

from qhdesign.tf2d import CrossSection, CrossSectionSolver, GateLayout, MeshOptions, SolverOptions

D = 100e-9
VG = -0.7
MESH = MeshOptions(half_width_m=1000e-9, growth=0.05, h_max_x_m=20e-9, h_max_z_m=20e-9)
SECTION = CrossSection(
    layer_z_m=np.array([0.0, 1000e-9]),
    layer_permittivity=np.array([12.9]),
    sheets=(),
    temperature_K=1.0,
    surface_potential_V=0.0,
    extra_levels_m=(D,),
)


def _top(x, gated):
    return np.where(gated, VG, 0.0)


def half_plane(x, z):
    """analytic: (V_g/pi)(pi/2 - arctan(x/z)); on the surface the boundary data itself."""
    zz = np.maximum(z, 1e-30)
    inside = (VG / np.pi) * (np.pi / 2 - np.arctan(x / zz))
    return np.where(z > 1e-13, inside, _top(x, x < 0))


def strip(w):
    def f(x, z):
        zz = np.maximum(z, 1e-30)
        inside = (VG / np.pi) * (np.arctan((x + w / 2) / zz) - np.arctan((x - w / 2) / zz))
        return np.where(z > 1e-13, inside, _top(x, np.abs(x) < w / 2))

    return f


def _solve(layout, exact):
    solver = CrossSectionSolver(
        SECTION, layout, MESH, SolverOptions(exposed="pinned"), outer_dirichlet=exact
    )
    sol = solver.solve(VG)
    k = int(np.argmin(np.abs(sol.z_m - D)))
    assert abs(sol.z_m[k] - D) < 1e-15
    return sol.x_m, sol.phi_V[k]


def test_half_plane_gate_matches_exact_laplace_solution(record_check):
    x, phi = _solve(GateLayout.single_edge(), half_plane)
    err = np.abs(phi - half_plane(x, D + 0 * x))
    record_check(
        "bare potential of a half-plane gate at depth d = 100 nm, pinned surface (all nodes)",
        "exact Laplace solution (V_g/π)(π/2 − arctan(x/d)), docs/derivations.md §6; Davies, "
        "Larkin, Sukhorukov, J. Appl. Phys. 77, 4504 (1995) (from memory)",
        phi / VG,
        half_plane(x, D + 0 * x) / VG,
        1e-4,
        kind="abs",
        unit="V_g",
    )
    assert np.max(err) / abs(VG) < 1e-4  # issue 4: 1e-4 of V_g
    # and the potential under the gate edge is half the gate voltage (analytic)
    assert np.interp(0.0, x, phi) == pytest.approx(VG / 2, abs=1e-4 * abs(VG))


@pytest.mark.parametrize("width", [100e-9, 300e-9])
def test_strip_gate_matches_exact_laplace_solution(width, record_check):
    x, phi = _solve(GateLayout.strip(width), strip(width))
    err = np.abs(phi - strip(width)(x, D + 0 * x))
    record_check(
        f"bare potential of a strip gate w = {width * 1e9:g} nm at depth 100 nm (all nodes)",
        "exact Laplace solution (V_g/π)[arctan((x+w/2)/d) − arctan((x−w/2)/d)], "
        "docs/derivations.md §6",
        phi / VG,
        strip(width)(x, D + 0 * x) / VG,
        1e-4,
        kind="abs",
        unit="V_g",
    )
    assert np.max(err) / abs(VG) < 1e-4  # issue 4: 1e-4 of V_g
