"""Weak-form pieces shared by the FEM stages (UFL; imported only when a form is built).

Each function returns a UFL form (an integral) or an integrand; a stage adds them up. Lengths
are in mesh units (nm); the stage chooses the scale factor that makes its units consistent.

* :func:`dielectric`: ``scale * eps grad(u) . grad(v) [r] dx``; the r weight makes the
  axisymmetric (r, z) form (the 2 pi of the azimuthal integral is left to the caller).
* :func:`sheet`: a charged sheet on tagged interior facets, ``density * v('+') [r('+')] dS``;
  the density is :func:`thomas_fermi_density` (nonlinear) or :func:`linear_sheet_density`
  (linear response: the quantum-capacitance term).
* :func:`far_field_robin`: the monopole far-field condition du/dn = -u (n . rho)/rho^2 on an
  outer boundary, ``eps (n . rho / rho^2) u v [r] ds``, rho measured from a centre; exact for a
  monopole field and it adds the exterior field energy of that monopole to the form.
* :func:`series_layer`: a thin charge-free layer (a gate dielectric) between a metal at potential
  u_m and a boundary, lumped into a series capacitance per area c = eps_0 eps_d / t:
  ``c (u - u_m) v [r] ds`` (a Robin condition; u_m = 0 in a linear response with the metal
  grounded). It adds the layer's field energy c (u - u_m)^2 / 2 per area to the energy.
* :func:`sheet_measure`: the interior-facet measure of the sheets with the quadrature the
  nonlinear sheet term needs (``exp``/``log`` in the integrand: the degree is set explicitly).

References
----------
J. D. Jackson, Classical Electrodynamics, 3rd ed. (Wiley, 1999), sec. 1.11 (field energy) and
sec. 3.1 (the axisymmetric Laplacian).
"""

from __future__ import annotations

__all__ = [
    "dielectric",
    "far_field_robin",
    "linear_sheet_density",
    "series_layer",
    "sheet",
    "sheet_measure",
    "softplus",
    "thomas_fermi_density",
]


def dielectric(u, v, eps, dx, *, r=None, scale=None):
    """``scale * eps * grad(u) . grad(v) * r * dx`` (scale and r optional)."""
    import ufl

    coef = eps if scale is None else scale * eps
    integrand = coef * ufl.inner(ufl.grad(u), ufl.grad(v))
    if r is not None:
        integrand = integrand * r
    return integrand * dx


def softplus(a):
    """ln(1 + e^a) written overflow-safe as max(a, 0) + ln(1 + e^-|a|)."""
    import ufl

    return ufl.max_value(a, 0.0) + ufl.ln(1.0 + ufl.exp(-abs(a)))


def thomas_fermi_density(u_plus, energy, dos, kT):
    """Thomas–Fermi sheet density D kT softplus((u - E)/kT) (u on the sheet's '+' side)."""
    return dos * kT * softplus((u_plus - energy) / kT)


def linear_sheet_density(coef, u_plus):
    """Linear response of a sheet held at the Fermi level: ``coef * u`` (coef = e^2 D / eps_0 in
    the caller's units)."""
    return coef * u_plus


def sheet(density, v, dS, *, r=None):
    """``density * v('+') * r('+') * dS`` on the sheet's interior facets (r optional)."""
    integrand = density * v("+")
    if r is not None:
        integrand = integrand * r("+")
    return integrand * dS


def far_field_robin(u, v, eps, ds, centre, *, r=None):
    """Monopole Robin term ``eps (n . rho / rho . rho) u v r ds`` with rho = x - centre.

    Parameters
    ----------
    u, v
        Trial/test functions (or two solutions, for an energy).
    eps
        Relative permittivity (a DG0 function or a constant).
    ds
        The outer-boundary measure restricted to the far-field facets.
    centre
        Monopole centre in mesh coordinates, a 2-tuple.
    r
        Axisymmetric weight (the r coordinate), or None.
    """
    import ufl

    msh = ds.ufl_domain()
    xs = ufl.SpatialCoordinate(msh)
    n = ufl.FacetNormal(msh)
    rho = xs - ufl.as_vector(tuple(float(c) for c in centre))
    beta = ufl.dot(n, rho) / ufl.dot(rho, rho)
    integrand = eps * beta * u * v
    if r is not None:
        integrand = integrand * r
    return integrand * ds


def series_layer(u, v, capacitance, ds, *, metal=None, r=None):
    """Robin term of a thin dielectric under a metal: ``c (u - u_m) v r ds``.

    Gauss's law across a charge-free layer of thickness t and permittivity eps_d whose thickness
    is small against the scale on which the field varies along it: the displacement through it
    is eps_0 eps_d (u_m - u)/t, so the semiconductor below sees the metal through the series
    capacitance per area c = eps_0 eps_d / t (Gauss's law for D, the parallel-plate capacitor).

    Parameters
    ----------
    u, v
        Trial/test functions (or two solutions, for an energy).
    capacitance
        c in the caller's units (e.g. C_EPS eps_d / (t / nm)); a float or a Constant.
    ds
        The boundary measure restricted to the facets under the metal.
    metal
        Metal potential u_m (a Constant), or None for a grounded metal.
    r
        Axisymmetric weight, or None.
    """
    integrand = capacitance * (u if metal is None else u - metal) * v
    if r is not None:
        integrand = integrand * r
    return integrand * ds


def sheet_measure(msh, facet_tags, degree: int):
    """Interior-facet measure for sheet terms: vertex quadrature if ``degree == 0`` (the nodal
    density, a diagonal Jacobian), else Gauss quadrature of that degree."""
    import ufl

    metadata = (
        {"quadrature_rule": "vertex", "quadrature_degree": 1}
        if degree == 0
        else {"quadrature_degree": degree}
    )
    return ufl.Measure("dS", domain=msh, subdomain_data=facet_tags, metadata=metadata)
