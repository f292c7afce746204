"""Linear response of the island around its operating point: K_I, K_L, K_IL (axisymmetric, DOLFINx).

On the operating point's own mesh (:mod:`qhdesign.island.operating`):

- the interfering edge I is the compressible strip at its solved position and width: a floating
  conductor ring on the primary's sheet (a compressible strip is a metal: charge added to it
  spreads as on an equipotential);
- the bulk L (the incompressible region inside the strip) carries a fixed charge distribution,
  uniform over A_L by default (``"parabolic"``: proportional to 1 - (r/r_L)^2); it never responds;
- every other sheet (the screening wells, the primary beyond the ring gate) responds linearly with
  its thermodynamic density of states at the field and temperature (:mod:`qhdesign.landau`),
  a potential u changing its charge by -e^2 D(r) u; where the operating point left a sheet empty
  (below 1 % of its 1D density) it is absent;
- the gate and a pinned surface or bottom contact are grounded; a frozen surface carries no
  change of charge (zero normal field), the outer side is zero-flux (the 1D far field). A gate
  on a dielectric (thickness t, permittivity eps_d) is grounded through the layer: the surface
  under it is a Robin boundary, the series capacitance per area eps_0 eps_d / t to the grounded
  metal (:func:`qhdesign.fem.forms.series_layer`, the nonlinear solve's own term), and the
  layer's field energy is part of the energy form.

With u_1 the potential of I at 1 V (everything else grounded, no L charge) and phi_L that of the
L charge (one electron charge) with I grounded: C_I = a(u_1, u_1), w = <sigma_L, u_1>,
G_LL = <sigma_L, phi_L>, and for a floating I (docs/island.md, "Linear response"):
K_I = e^2/C_I, K_IL = w K_I, K_L = G_LL + w^2 K_I; hence r = K_IL/K_I = w, the mean of u_1 over
the L charge (the reciprocity form). The direct form, the charge the L charge induces on the
grounded I, -(a(phi_L, chi_I) - <sigma_L, chi_I>), must equal w (checked: ``r_direct``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from qhdesign.fem.tensor_mesh import NM
from qhdesign.section.geometry import TAGS
from qhdesign.section.profile import EDGE_FRACTION
from qhdesign.section.solver import C_EPS, DOS_SCALE

from .operating import EdgeStrip, OperatingPoint

__all__ = [
    "BULK_SHAPES",
    "ResponseProblem",
    "ResponseResult",
    "floating_edge_energies",
    "response_forms",
]

#: Shapes of the bulk's added charge over A_L.
BULK_SHAPES = ("uniform", "parabolic")


@dataclass(frozen=True)
class ResponseResult:
    """Electrostatic energies of the island at one field (J; K_I without the edge term)."""

    K_I_electrostatic_J: float
    K_L_J: float
    K_IL_J: float
    r_reciprocity: float
    r_direct: float
    conductor_radii_m: tuple[float, float]
    info: dict = field(default_factory=dict)


class ResponseProblem:
    """Forms compiled once on an operating point's mesh; :meth:`solve` per field.

    Parameters
    ----------
    op
        The solved operating point.
    bulk_shape
        ``"uniform"`` or ``"parabolic"``.
    """

    def __init__(self, op: OperatingPoint, bulk_shape: str = "uniform"):
        import ufl
        from dolfinx import default_scalar_type, fem

        from qhdesign.fem import forms

        if bulk_shape not in BULK_SHAPES:
            from qhdesign.errors import InputError

            raise InputError(
                f"bulk charge shape '{bulk_shape}'; allowed: {', '.join(BULK_SHAPES)}",
                key="bulk_shape",
            )
        self.op = op
        s = op.solver
        self.solver = s
        self.comm = s.comm
        msh, ft = s.mesh, s.facet_tags
        V = s.V
        self.V = V
        self.r_ref_nm = float(s.grid.x_m[-1] / NM)
        wr = s.radial_weight()
        dx = ufl.Measure("dx", domain=msh)
        dS = ufl.Measure("dS", domain=msh, subdomain_data=ft)
        nsh = len(op.section.sheets)
        self.tags = [TAGS["sheet0"] + i for i in range(nsh)]
        self.D = [fem.Function(V) for _ in range(nsh)]  # e V^-1 nm^-2 on each sheet's dofs
        Q = fem.functionspace(msh, ("DG", 0))
        self.chi_L = fem.Function(Q)  # 1 on cells with r < r_L
        self.r_L = fem.Constant(msh, default_scalar_type(1.0))
        x = ufl.SpatialCoordinate(msh)[0]
        shape = 1.0 if bulk_shape == "uniform" else (1.0 - (x / self.r_L) ** 2)
        self.bulk_shape = bulk_shape
        ip = op.primary_index
        sig = self.chi_L("+") * (shape("+") if bulk_shape != "uniform" else 1.0)
        ds = ufl.Measure("ds", domain=msh, subdomain_data=ft)
        t_d = float(op.section.gate_dielectric_thickness_m)
        # the gate dielectric's series capacitance per area, in the solver's units (as its form)
        c_d = C_EPS * op.section.gate_dielectric_permittivity / (t_d / NM) if t_d > 0 else None
        self.dielectric_capacitance_F_m2 = (
            sc.epsilon_0 * op.section.gate_dielectric_permittivity / t_d if t_d > 0 else 0.0
        )

        def gate_layer(u, v):  # the grounded gate seen through its dielectric
            return forms.series_layer(u, v, c_d, ds(TAGS["gate"]), r=wr)

        built = response_forms(
            V,
            C_EPS * s.eps,
            dx,
            dS,
            self.tags,
            self.D,
            self.tags[ip],
            sig,
            weight=wr,
            extra=gate_layer if c_d is not None else None,
        )
        self.a_form, self.b_form, self.total_form, self.e_form, self.ua, self.ub = built
        # dofs: the grounded set (gate on the bare surface, pinned surface, bottom contact) as the
        # solver has it; a gate on a dielectric has no Dirichlet dofs (its Robin term above)
        grounded = [d for d, kind in s._bc_groups if kind != "outer"]
        self.ground = np.unique(np.concatenate(grounded or [np.zeros(0, dtype=np.int32)])).astype(
            np.int32
        )
        prim = fem.locate_dofs_topological(V, 1, ft.find(self.tags[ip]))
        self.prim_dofs = prim
        self.prim_r_m = s._dof_x_m[prim]
        self.sheet_dofs = [fem.locate_dofs_topological(V, 1, ft.find(t)) for t in self.tags]
        # cell r-centroids for the L indicator
        tdim = msh.topology.dim
        ncell = msh.topology.index_map(tdim).size_local + msh.topology.index_map(tdim).num_ghosts
        from dolfinx.mesh import compute_midpoints

        self.cell_r_m = compute_midpoints(msh, tdim, np.arange(ncell, dtype=np.int32))[:, 0] * NM

    # ------------------------------------------------------------------ per field
    def set_sheet_dos(self, dos_by_sheet: list[np.ndarray]) -> None:
        """Nodal dn/dmu (J^-1 m^-2) of every sheet on the grid r-nodes, shape (nr,) each."""
        s = self.solver
        for D, dofs, vals in zip(self.D, self.sheet_dofs, dos_by_sheet, strict=True):
            D.x.array[:] = 0.0
            D.x.array[dofs] = np.asarray(vals)[s._dof_ix[dofs]] * DOS_SCALE
            D.x.scatter_forward()

    def solve(self, strip: EdgeStrip) -> ResponseResult:
        """Energies for the edge strip ``strip`` (its conductor snapped to the grid nodes)."""
        r_nodes = self.solver.grid.x_m
        r0 = float(r_nodes[np.argmin(np.abs(r_nodes - strip.inner_radius_m))])
        r1 = float(r_nodes[np.argmin(np.abs(r_nodes - strip.outer_radius_m))])
        tol = 1e-6 * NM
        in_I = (self.prim_r_m >= r0 - tol) & (self.prim_r_m <= r1 + tol)
        dofs_I = self.prim_dofs[in_I].astype(np.int32)
        self.chi_L.x.array[:] = (self.cell_r_m < r0).astype(float)
        self.chi_L.x.scatter_forward()
        self.r_L.value = r0 / NM
        res = floating_edge_energies(
            self.V,
            (self.a_form, self.b_form, self.total_form, self.e_form, self.ua, self.ub),
            self.ground,
            dofs_I,
            scale=2.0 * math.pi * self.r_ref_nm,  # the 3D integral of an r/r_ref-weighted form
            comm=self.comm,
            solver="lu",
        )
        return ResponseResult(
            K_I_electrostatic_J=res["K_I_J"],
            K_L_J=res["K_L_J"],
            K_IL_J=res["K_IL_J"],
            r_reciprocity=res["r_reciprocity"],
            r_direct=res["r_direct"],
            conductor_radii_m=(r0, r1),
            info={"C_I_F": res["C_I_F"], "G_LL_J": res["G_LL_J"], "bulk_shape": self.bulk_shape},
        )


def response_forms(
    V, eps_scaled, dx, dS, sheet_tags, dos, primary_tag, sigma_L, *, weight=None, extra=None
):
    """The forms of the island's linear response, in any dimension (UFL, compiled).

    Parameters
    ----------
    V
        P1 space.
    eps_scaled
        C_EPS times the relative permittivity (a DG0 function times the unit factor), so that the
        energy form gives e/V for potentials in V.
    dx, dS
        Cell measure and interior-facet measure with the sheets' facet tags.
    sheet_tags, dos
        Each sheet's facet tag and its dn/dmu as a P1 function (e V^-1 nm^-2).
    primary_tag
        Facet tag of the primary well (which carries the bulk charge).
    sigma_L
        The bulk charge's shape on the primary ('+' restricted UFL expression, unnormalised).
    weight
        The axisymmetric weight r/r_ref (UFL), or None in a Cartesian mesh (2D or 3D).
    extra
        Optional ``extra(u, v)``: a further bilinear term (weighted by the caller), e.g. the
        series capacitance of gates on a dielectric.

    Returns
    -------
    (a, b, total, energy, ua, ub)
        The bilinear form a(u, v), the bulk load <sigma_L, v>, the bulk charge's total, the
        energy a(ua, ub) of two functions ``ua``, ``ub``.
    """
    import ufl
    from dolfinx import default_scalar_type, fem

    def w(expr, restricted=False):
        if weight is None:
            return expr
        return expr * (weight("+") if restricted else weight)

    def energy(u, v):
        a = w(eps_scaled * ufl.inner(ufl.grad(u), ufl.grad(v))) * dx
        for D, tag in zip(dos, sheet_tags, strict=True):
            a += w(D("+") * u("+") * v("+"), True) * dS(tag)
        if extra is not None:
            a += extra(u, v)
        return a

    u_t, v_t = ufl.TrialFunction(V), ufl.TestFunction(V)
    a_form = fem.form(energy(u_t, v_t))
    b_form = fem.form(w(sigma_L * v_t("+"), True) * dS(primary_tag))
    one = fem.Constant(V.mesh, default_scalar_type(1.0))
    total_form = fem.form(w(sigma_L * one, True) * dS(primary_tag))
    ua, ub = fem.Function(V), fem.Function(V)
    e_form = fem.form(energy(ua, ub))
    return a_form, b_form, total_form, e_form, ua, ub


def floating_edge_energies(V, forms, ground_dofs, edge_dofs, *, scale, comm, solver="lu"):
    """K_I, K_L, K_IL of a floating edge conductor and a fixed bulk charge (any dimension).

    With u_1 the potential of the edge at 1 V (``ground_dofs`` at 0, no bulk charge) and phi_L
    that of one electron charge spread as the bulk load with the edge grounded:
    C_I = a(u_1, u_1), w = <sigma_L, u_1>, G_LL = <sigma_L, phi_L>; K_I = e^2/C_I,
    K_IL = w K_I, K_L = G_LL + w^2 K_I (docs/island.md, "Linear response"). The direct form of
    w, the charge the bulk charge induces on the grounded edge, is returned as ``r_direct``.

    Parameters
    ----------
    V
        P1 space.
    forms
        The tuple of :func:`response_forms`.
    ground_dofs, edge_dofs
        Local dofs held at 0 (gates, pinned surface, bottom contact) and the edge conductor's dofs.
    scale
        Factor from the forms' integral to the energy in e V (2 pi r_ref for the r/r_ref-weighted
        axisymmetric forms, 1 in a 3D mesh in nm).
    comm
        The mesh's communicator.
    solver
        ``"lu"`` (MUMPS) or ``"gamg"`` (CG + GAMG, rtol 1e-12: the 3D meshes).

    Returns
    -------
    dict
        ``K_I_J`` (electrostatic), ``K_L_J``, ``K_IL_J``, ``r_reciprocity``, ``r_direct``,
        ``C_I_F``, ``G_LL_J``; and the two solutions, ``u_edge`` (u_1, V) and ``phi_bulk`` (phi_L,
        V per e), as P1 functions.
    """
    from dolfinx import fem
    from dolfinx.fem import petsc as fpetsc
    from petsc4py import PETSc

    MPI = _mpi()
    a_form, b_form, total_form, e_form, ua, ub = forms
    dofs_I = np.asarray(edge_dofs, dtype=np.int32)
    bc_dofs = np.unique(np.concatenate((np.asarray(ground_dofs), dofs_I))).astype(np.int32)
    g = fem.Function(V)
    bc = fem.dirichletbc(g, bc_dofs)
    A = fpetsc.assemble_matrix(a_form, bcs=[bc])
    A.assemble()
    ksp = PETSc.KSP().create(comm)
    ksp.setOperators(A)
    if solver == "lu":
        ksp.setType("preonly")
        ksp.getPC().setType("lu")
        ksp.getPC().setFactorSolverType("mumps")
    else:
        ksp.setType("cg")
        ksp.getPC().setType("gamg")
        ksp.setTolerances(rtol=1e-12, atol=1e-30, max_it=2000)
        opts = PETSc.Options()
        prefix = f"qh_resp_{id(ksp)}_"
        ksp.setOptionsPrefix(prefix)
        # as the 3D nonlinear solver (qhdesign.layout.model3d): no GAMG graph threshold on flat
        # cells, Chebyshev/Jacobi smoothing
        for k, v in (
            ("pc_gamg_threshold", 0.0),
            ("mg_levels_ksp_type", "chebyshev"),
            ("mg_levels_pc_type", "jacobi"),
        ):
            opts[prefix + k] = v
        ksp.setFromOptions()
        ksp.setErrorIfNotConverged(True)

    total = scale * comm.allreduce(fem.assemble_scalar(total_form), op=MPI.SUM)

    def rhs(with_charge: bool):
        b = fpetsc.assemble_vector(b_form)
        # on the local form: the ghost entries hold contributions not yet added to their owners
        # (a plain b.set / b.scale would leave them, and the reverse scatter would add them)
        with b.localForm() as loc:
            loc.scale(1.0 / total if with_charge else 0.0)
        fpetsc.apply_lifting(b, [a_form], bcs=[[bc]])
        b.ghostUpdate(addv=PETSc.InsertMode.ADD, mode=PETSc.ScatterMode.REVERSE)
        fpetsc.set_bc(b, [bc])
        return b

    # u_1: I at 1 V
    g.x.array[:] = 0.0
    g.x.array[dofs_I] = 1.0
    b1 = rhs(False)
    u1 = fem.Function(V)
    ksp.solve(b1, u1.x.petsc_vec)
    u1.x.scatter_forward()
    # phi_L: one electron charge over A_L, I grounded
    g.x.array[:] = 0.0
    bL = rhs(True)
    phiL = fem.Function(V)
    ksp.solve(bL, phiL.x.petsc_vec)
    phiL.x.scatter_forward()
    for k in (ksp, A, b1, bL):
        k.destroy()

    def energy(p, q) -> float:
        ua.x.array[:] = p.x.array
        ub.x.array[:] = q.x.array
        return scale * comm.allreduce(fem.assemble_scalar(e_form), op=MPI.SUM)

    def load(p) -> float:  # <sigma_L, p> with the charge normalised to one e
        b = fpetsc.assemble_vector(b_form)
        b.ghostUpdate(addv=PETSc.InsertMode.ADD, mode=PETSc.ScatterMode.REVERSE)
        val = b.dot(p.x.petsc_vec) * scale / total
        b.destroy()
        return float(val)

    C_I = energy(u1, u1)  # e/V
    w = load(u1)
    G_LL = load(phiL)  # V per e = eV per e^2
    chi = fem.Function(V)
    chi.x.array[dofs_I] = 1.0
    chi.x.scatter_forward()
    q_ind = energy(phiL, chi) - load(chi)
    K_I = 1.0 / C_I  # eV
    eV = sc.e
    return {
        "K_I_J": K_I * eV,
        "K_L_J": (G_LL + w * w * K_I) * eV,
        "K_IL_J": w * K_I * eV,
        "r_reciprocity": w,
        "r_direct": -q_ind,
        "C_I_F": C_I * sc.e,
        "G_LL_J": G_LL * eV,
        "u_edge": u1,
        "phi_bulk": phiL,
    }


def sheet_dos_profiles(op: OperatingPoint, strip: EdgeStrip, dos_of) -> list[np.ndarray]:
    """dn/dmu (J^-1 m^-2) of every sheet on the grid r-nodes.

    ``dos_of(i, n_m2)`` gives sheet i's thermodynamic DOS at densities n. Sheets are absent
    (zero) where the operating point left them below 1 % of their 1D density; the primary
    responds only beyond its electronic edge (inside it is the bulk L and the edge I).
    """
    r = op.r_m
    out = []
    for i, s in enumerate(op.section.sheets):
        n = op.solution.density_m2[i]
        present = n > EDGE_FRACTION * max(s.density_m2, 1.0)
        if i == op.primary_index:
            present &= r > strip.outer_radius_m
        D = np.zeros(r.size)
        if np.any(present):
            D[present] = dos_of(i, n[present])
        out.append(D)
    return out


def _mpi():
    from mpi4py import MPI

    return MPI
