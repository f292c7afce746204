"""The nonlinear Thomas–Fermi–Poisson residual, written once for any mesh dimension.

Used by the 2D cross-section solver (``solver.py``, triangles in (x, z)) and by the 3D layout
model (``qhdesign/layout/``, tetrahedra in (x, y, z)): sheets are tagged facets (lines in 2D,
surfaces in 3D) and UFL's ``dS`` integrates over either, so the physics is the same code and the
dimension is only the mesh's. Lengths in nm, potential in V, charge in units of e.

    F(phi; v) = int c eps_r grad(phi).grad(v) dx
              + sum_w int D_w kT softplus((phi - E_w)/kT) v dS_w
              - int q_lines v dS_levels - int q_lines v ds_(exposed, bottom)
              - int sigma v ds_exposed

with c = eps_0/e. The softplus is written overflow-safe as max(a, 0) + ln(1 + exp(-|a|)).
"""

from __future__ import annotations

from collections.abc import Sequence

from scipy import constants as sc

__all__ = ["AREA_SCALE", "C_EPS", "DOS_SCALE", "sheet_measure", "thomas_fermi_residual"]

NM = 1e-9
#: eps_0/e in e V^-1 nm^-1
C_EPS = sc.epsilon_0 / sc.e * NM
#: J^-1 m^-2 -> eV^-1 nm^-2
DOS_SCALE = sc.e * NM**2
#: m^-2 -> nm^-2 ; C/m^2 -> e/nm^2
AREA_SCALE = NM**2


def sheet_measure(msh, facet_tags, quadrature_degree: int):
    """Interior-facet measure for the sheet terms; degree 0 means vertex quadrature.

    The softplus contains exp/ln, for which UFL's automatic degree explodes: the degree is set
    explicitly.
    """
    import ufl

    md = (
        {"quadrature_rule": "vertex", "quadrature_degree": 1}
        if quadrature_degree == 0
        else {"quadrature_degree": int(quadrature_degree)}
    )
    return ufl.Measure("dS", domain=msh, subdomain_data=facet_tags, metadata=md)


def thomas_fermi_residual(
    u,
    v,
    *,
    eps,
    q_lines,
    sigma,
    kT,
    sheets: Sequence[tuple[object, object, int]],
    dx,
    dS,
    ds,
    dS_sheet,
    level_tag: int,
    exposed_tags: Sequence[int],
    bottom_tag: int,
):
    """UFL residual of the Thomas–Fermi–Poisson problem (see the module docstring).

    Parameters
    ----------
    u, v
        Potential (V) and test function.
    eps
        Relative permittivity (DG0 function).
    q_lines
        Frozen charge lumped on the z-levels (e/nm^2, nodal).
    sigma
        Frozen surface charge of the exposed surface (e/nm^2, ``fem.Constant``).
    kT
        k_B T / e (V, ``fem.Constant``).
    sheets
        Per sheet: (E_w in V, D_w in eV^-1 nm^-2, facet tag), E and D as ``fem.Constant``.
    dx, dS, ds, dS_sheet
        Measures with the cell/facet tags; ``dS_sheet`` from :func:`sheet_measure`.
    level_tag, exposed_tags, bottom_tag
        Facet tags of the charged interior levels, of the exposed surface, and of the bottom.
    """
    import ufl

    sheet_tags = tuple(t for _, _, t in sheets)
    F = C_EPS * eps * ufl.inner(ufl.grad(u), ufl.grad(v)) * dx
    F -= q_lines("+") * v("+") * dS((level_tag, *sheet_tags))
    F -= q_lines * v * ds((*exposed_tags, bottom_tag))
    F -= sigma * v * ds(tuple(exposed_tags))
    for E, D, tag in sheets:
        a = (u("+") - E) / kT
        softplus = ufl.max_value(a, 0.0) + ufl.ln(1.0 + ufl.exp(-abs(a)))
        F += D * kT * softplus * v("+") * dS_sheet(tag)
    return F
