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

__all__ = ["BULK_SHAPES", "ResponseProblem", "ResponseResult"]

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
        wS = wr("+")
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

        ds = ufl.Measure("ds", domain=msh, subdomain_data=ft)
        t_d = float(op.section.gate_dielectric_thickness_m)
        # the gate dielectric's series capacitance per area, in the solver's units (as its form)
        c_d = C_EPS * op.section.gate_dielectric_permittivity / (t_d / NM) if t_d > 0 else None
        self.dielectric_capacitance_F_m2 = (
            sc.epsilon_0 * op.section.gate_dielectric_permittivity / t_d if t_d > 0 else 0.0
        )

        def energy(u, v):
            a = forms.dielectric(u, v, s.eps, dx, scale=C_EPS, r=wr)
            for D, tag in zip(self.D, self.tags, strict=True):
                a += D("+") * u("+") * v("+") * wS * dS(tag)
            if c_d is not None:  # the grounded gate seen through its dielectric
                a += forms.series_layer(u, v, c_d, ds(TAGS["gate"]), r=wr)
            return a

        u_t, v_t = ufl.TrialFunction(V), ufl.TestFunction(V)
        self.a_form = fem.form(energy(u_t, v_t))
        ip = op.primary_index
        sig = self.chi_L("+") * (shape("+") if bulk_shape != "uniform" else 1.0)
        self.b_form = fem.form(sig * v_t("+") * wS * dS(self.tags[ip]))
        one = fem.Constant(msh, default_scalar_type(1.0))
        self.total_form = fem.form(sig * one * wS * dS(self.tags[ip]))
        self.ua, self.ub = fem.Function(V), fem.Function(V)
        self.e_form = fem.form(energy(self.ua, self.ub))
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
        from dolfinx import fem
        from dolfinx.fem import petsc as fpetsc
        from petsc4py import PETSc

        MPI = _mpi()
        comm = self.comm
        r_nodes = self.solver.grid.x_m
        r0 = float(r_nodes[np.argmin(np.abs(r_nodes - strip.inner_radius_m))])
        r1 = float(r_nodes[np.argmin(np.abs(r_nodes - strip.outer_radius_m))])
        tol = 1e-6 * NM
        in_I = (self.prim_r_m >= r0 - tol) & (self.prim_r_m <= r1 + tol)
        dofs_I = self.prim_dofs[in_I].astype(np.int32)
        self.chi_L.x.array[:] = (self.cell_r_m < r0).astype(float)
        self.chi_L.x.scatter_forward()
        self.r_L.value = r0 / NM
        bc_dofs = np.unique(np.concatenate((self.ground, dofs_I))).astype(np.int32)
        g = fem.Function(self.V)
        bc = fem.dirichletbc(g, bc_dofs)
        A = fpetsc.assemble_matrix(self.a_form, bcs=[bc])
        A.assemble()
        ksp = PETSc.KSP().create(comm)
        ksp.setOperators(A)
        ksp.setType("preonly")
        ksp.getPC().setType("lu")
        ksp.getPC().setFactorSolverType("mumps")

        scale = 2.0 * math.pi * self.r_ref_nm  # the 3D integral of an r/r_ref-weighted form
        total = scale * comm.allreduce(fem.assemble_scalar(self.total_form), op=MPI.SUM)

        def rhs(with_charge: bool):
            b = fpetsc.assemble_vector(self.b_form)
            if not with_charge:
                b.set(0.0)
            else:
                b.scale(1.0 / total)
            fpetsc.apply_lifting(b, [self.a_form], bcs=[[bc]])
            b.ghostUpdate(addv=PETSc.InsertMode.ADD, mode=PETSc.ScatterMode.REVERSE)
            fpetsc.set_bc(b, [bc])
            return b

        # u_1: I at 1 V
        g.x.array[:] = 0.0
        g.x.array[dofs_I] = 1.0
        b1 = rhs(False)
        u1 = fem.Function(self.V)
        ksp.solve(b1, u1.x.petsc_vec)
        u1.x.scatter_forward()
        # phi_L: one electron charge over A_L, I grounded
        g.x.array[:] = 0.0
        bL = rhs(True)
        phiL = fem.Function(self.V)
        ksp.solve(bL, phiL.x.petsc_vec)
        phiL.x.scatter_forward()
        for k in (ksp, A, b1, bL):
            k.destroy()

        def energy(p, q) -> float:
            self.ua.x.array[:] = p.x.array
            self.ub.x.array[:] = q.x.array
            return scale * comm.allreduce(fem.assemble_scalar(self.e_form), op=MPI.SUM)

        def load(p) -> float:  # <sigma_L, p> with the charge normalised to one e
            b = fpetsc.assemble_vector(self.b_form)
            b.ghostUpdate(addv=PETSc.InsertMode.ADD, mode=PETSc.ScatterMode.REVERSE)
            val = b.dot(p.x.petsc_vec) * scale / total
            b.destroy()
            return float(val)

        C_I = energy(u1, u1)  # e/V
        w = load(u1)
        G_LL = load(phiL)  # V per e = eV per e^2
        chi = fem.Function(self.V)
        chi.x.array[dofs_I] = 1.0
        chi.x.scatter_forward()
        q_ind = energy(phiL, chi) - load(chi)
        K_I = 1.0 / C_I  # eV
        eV = sc.e
        return ResponseResult(
            K_I_electrostatic_J=K_I * eV,
            K_L_J=(G_LL + w * w * K_I) * eV,
            K_IL_J=w * K_I * eV,
            r_reciprocity=w,
            r_direct=-q_ind,
            conductor_radii_m=(r0, r1),
            info={"C_I_F": C_I * sc.e, "G_LL_J": G_LL * eV, "bulk_shape": self.bulk_shape},
        )


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
