"""The 3D Thomas–Fermi model of a stack under a gate layout, on DOLFINx (distributed).

The physics is the 2D cross-section's (:class:`qhdesign.section.solver.CrossSectionSolver`), in
one more dimension: the residual is assembled from the same engine pieces
(:mod:`qhdesign.fem.forms`: ``dielectric``, ``thomas_fermi_density``, ``sheet``,
``sheet_measure``) with the same unit factors, and the same sheet energies E_w come from the exact
column calibration on the mesh's z-levels (:func:`qhdesign.section.model.calibrate`), so far from
the gates the 3D solution reproduces the 1D per-well densities. Each gate is a Dirichlet patch of
the top surface at V_g - Phi_B/e; the rest of the top is the stack's exposed surface (frozen
charge or pinned); the sides are zero-normal-field; the bottom as in the 2D stage.

Linear response on the same mesh uses the Jacobian of that residual at the solution:

- d(phi)/dV_p (plunger lever arm): J dphi = 0 with dphi = 1 on the plunger, 0 on the other
  Dirichlet parts; dn_w/dV = D_w sigmoid((phi - E_w)/kT) dphi on each sheet.
- capacitances: the same operator with chosen parts of the primary sheet made ideal conductors
  (Dirichlet) and the primary's own sheet term dropped there; C_ij = a(u_i, u_j) (energy form).

Solver: Newton (PETSc SNES, backtracking line search) with CG + GAMG for every linear solve (the
Jacobian is symmetric positive definite); tolerances tight enough that serial and parallel runs
agree to far better than 1e-8 relative in the reported figures.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, replace

import numpy as np
from scipy import constants as sc

from qhdesign.errors import ConvergenceError, InputError
from qhdesign.section.geometry import GateLayout, MeshOptions, build_grid
from qhdesign.section.model import CrossSection, calibrate
from qhdesign.section.solver import AREA_SCALE, C_EPS, DOS_SCALE

from .layoutfile import Layout
from .mesh3d import NM, TAGS3, build_mesh3d

__all__ = ["Layout3DOptions", "LayoutSolver"]


#: Level spacing at the sheets without a setting (m).
DEFAULT_SHEET_LEVEL_M = 3e-9


@dataclass(frozen=True)
class Layout3DOptions:
    """Resolution and solver settings of the 3D model (SI lengths).

    Attributes
    ----------
    h_surface_m, h_sheet_m
        Level spacing at the surface and at every sheet (m); ``h_sheet_m`` None: the layout's
        ``mesh.sheet_level``, else 3 nm.
    growth
        Linear growth of the level spacing away from them.
    h_max_z_m
        Largest level spacing (m).
    refine
        Divides every in-plane and vertical size (2: about 8x the dofs).
    edge_normal_m, edge_band_m
        Anisotropic band along the gate edges (:func:`~qhdesign.layout.mesh3d.plane_mesh`):
        element size across the edges and the band's half width (m). None: the layout's
        ``mesh.edge_normal`` / ``mesh.edge_band``; with neither, an isotropic mesh; a band
        without a width is the primary sheet's depth.
    exposed
        ``"frozen"``, ``"pinned"`` or None (the stack's surface.charge).
    strip_chord_m
        Curvature-adapted strip rows of the island response (m,
        :func:`qhdesign.layout.response3d.island_response`); None: the layout's
        ``mesh.strip_chord``, else rows ``mesh.gate_edge`` apart.
    rtol
        SNES relative tolerance; linear solves use ``ksp_rtol``.
    """

    h_surface_m: float = 1e-9
    h_sheet_m: float | None = None
    growth: float = 0.35
    h_max_z_m: float = 80e-9
    refine: float = 1.0
    edge_normal_m: float | None = None
    edge_band_m: float | None = None
    exposed: str | None = None
    strip_chord_m: float | None = None
    rtol: float = 1e-11
    atol: float = 1e-13
    ksp_rtol: float = 1e-12
    max_it: int = 60
    kT_start_eV: float = 2.0e-3
    kT_factor: float = 10.0
    sheet_quadrature_degree: int = 0


def _krylov_options(rtol: float) -> dict:
    return {
        "ksp_type": "cg",
        "pc_type": "gamg",
        "ksp_rtol": rtol,
        "ksp_atol": 1e-30,
        "ksp_max_it": 2000,
        # no graph threshold: with 0.02 the GAMG set-up on these flat (anisotropic) 3D cells
        # took 27 s instead of 1.2 s at 50k dofs (measured)
        "pc_gamg_threshold": 0.0,
        "mg_levels_ksp_type": "chebyshev",
        "mg_levels_pc_type": "jacobi",
        "ksp_error_if_not_converged": True,
    }


class LayoutSolver:
    """Mesh, forms and Newton solver for one stack (cross-section) under one layout.

    Parameters
    ----------
    section
        The stack's column (:func:`qhdesign.pipeline.section_from_stack`).
    layout
        The gate layout (its voltages are the default operating point).
    options
        :class:`Layout3DOptions`.
    comm
        MPI communicator (default ``MPI.COMM_WORLD``).
    curves
        Extra closed polylines (m) embedded in the plane mesh (the island's strip boundaries).
    """

    def __init__(
        self, section: CrossSection, layout: Layout, options=None, *, comm=None, curves=()
    ):
        from qhdesign.fem.backend import load

        MPI, _ = load()
        if any(getattr(s, "law", None) is not None for s in section.sheets):
            raise InputError(
                "the 3D stage models closed-form Thomas–Fermi sheets; build its cross-section "
                "with the constant-dos sheet model",
                key="sheets",
            )
        self.section = section
        self.layout = layout
        self.options = options or Layout3DOptions()
        if self.options.exposed is None:
            self.options = replace(self.options, exposed=section.surface_mode)
        if self.options.h_sheet_m is None:
            h = layout.sheet_level_m if layout.sheet_level_m is not None else DEFAULT_SHEET_LEVEL_M
            self.options = replace(self.options, h_sheet_m=h)
        if self.options.strip_chord_m is None and layout.strip_chord_m is not None:
            self.options = replace(self.options, strip_chord_m=layout.strip_chord_m)
        if self.options.exposed not in ("frozen", "pinned"):
            raise InputError("exposed surface must be 'frozen' or 'pinned'", key="exposed")
        self.comm = comm if comm is not None else MPI.COMM_WORLD
        self.timings: dict[str, float] = {}
        o = self.options
        t0 = time.perf_counter()
        grid = build_grid(
            section,
            GateLayout.single_edge(),
            MeshOptions(
                h_edge_m=o.h_surface_m,
                h_sheet_m=o.h_sheet_m,
                growth=o.growth,
                h_max_z_m=o.h_max_z_m,
                h_max_x_m=1e-6,
                half_width_m=1e-6,
                refine=o.refine,
            ),
        )
        self.levels_m = grid.z_m
        self.sheet_level = grid.sheet_level
        eps_int = np.asarray(section.layer_permittivity)[grid.layer_of_interval]
        self.calibration = calibrate(section, grid.z_m, eps_int, exposed=o.exposed)
        charged = np.nonzero(self.calibration["line_charge_C_m2"])[0]
        self.timings["levels"] = time.perf_counter() - t0
        normal = o.edge_normal_m if o.edge_normal_m is not None else layout.edge_normal_m
        band = o.edge_band_m if o.edge_band_m is not None else layout.edge_band_m
        if band is None:
            roles = [sh.role for sh in section.sheets]
            band = section.sheets[roles.index("primary") if "primary" in roles else 0].z_m
        m3, tm = build_mesh3d(
            layout,
            grid.z_m,
            grid.layer_of_interval,
            grid.sheet_level,
            charged,
            self.comm,
            o.refine,
            curves,
            edge_normal_m=normal,
            edge_band_m=band,
            # the band's first row as far from the gate edge as the first level below the
            # surface: cells isotropic across the edge's singular line
            edge_first_m=o.h_surface_m,
        )
        self.timings |= {f"mesh_{k}": v for k, v in tm.items()}
        self.m3 = m3
        self.plane = m3.plane
        self.mesh, self.cell_tags, self.facet_tags = m3.mesh, m3.cell_tags, m3.facet_tags
        t0 = time.perf_counter()
        self._setup()
        self.timings["forms"] = time.perf_counter() - t0
        self._solved = False
        self.voltages = {g.name: g.voltage_V for g in layout.gates}

    # ------------------------------------------------------------------ set-up
    def _setup(self) -> None:
        import ufl
        from dolfinx import default_scalar_type, fem
        from scipy.spatial import cKDTree

        from qhdesign.fem import forms

        msh, ft = self.mesh, self.facet_tags
        self.V = fem.functionspace(msh, ("Lagrange", 1))
        imap = self.V.dofmap.index_map
        self.num_dofs = imap.size_global
        self.n_owned = imap.size_local
        xyz = self.V.tabulate_dof_coordinates()
        # every dof is a (plane node, level) pair
        _, self._dof_plane = cKDTree(self.plane.xy_m / NM).query(xyz[:, :2])
        z = self.levels_m
        depth = -xyz[:, 2] * NM
        k = np.clip(np.searchsorted(z, depth), 1, z.size - 1)
        self._dof_level = np.where(np.abs(depth - z[k - 1]) <= np.abs(z[k] - depth), k - 1, k)

        Q = fem.functionspace(msh, ("DG", 0))
        self.eps = fem.Function(Q)
        eps_layers = np.asarray(self.section.layer_permittivity, dtype=float)
        self.eps.x.array[self.cell_tags.indices] = eps_layers[self.cell_tags.values - 1]
        self.eps.x.scatter_forward()
        self.q_lines = fem.Function(self.V)
        q = self.calibration["line_charge_C_m2"] / sc.e * AREA_SCALE
        self.q_lines.x.array[:] = q[self._dof_level]
        self.phi = fem.Function(self.V, name="phi_V")
        self._g = fem.Function(self.V)

        # Dirichlet parts: each gate, a pinned exposed surface, a bottom contact
        def dofs_of(tag: int) -> np.ndarray:
            return fem.locate_dofs_topological(self.V, 2, ft.find(tag))

        self._gate_dofs = [dofs_of(TAGS3["gate0"] + i) for i in range(len(self.layout.gates))]
        # a gate on a dielectric: its series capacitance per area in the form's units, else None
        self._gate_layer = [_layer_capacitance(g, self.section) for g in self.layout.gates]
        self._fixed_groups: list[tuple[np.ndarray, float]] = []
        if self.options.exposed == "pinned":
            self._fixed_groups.append((dofs_of(TAGS3["exposed"]), self.section.surface_potential_V))
        if self.section.bottom == "gate":
            self._fixed_groups.append((dofs_of(TAGS3["bottom"]), self.section.bottom_potential_V))
        metal = [d for d, c in zip(self._gate_dofs, self._gate_layer, strict=True) if c is None]
        parts = [*metal, *(d for d, _ in self._fixed_groups), np.zeros(0, dtype=np.int32)]
        self._bc_dofs = np.unique(np.concatenate(parts)).astype(np.int32)
        self.bc = fem.dirichletbc(self._g, self._bc_dofs)

        kT = sc.k * self.section.temperature_K / sc.e
        self.kT_target_eV = kT
        self.kT = fem.Constant(msh, default_scalar_type(kT))
        self.sigma = fem.Constant(msh, default_scalar_type(0.0))
        if self.options.exposed == "frozen":
            self.sigma.value = self.calibration["surface_charge_C_m2"] / sc.e * AREA_SCALE
        self.dx = ufl.Measure("dx", domain=msh, subdomain_data=self.cell_tags)
        self.dS = ufl.Measure("dS", domain=msh, subdomain_data=ft)
        self.ds = ufl.Measure("ds", domain=msh, subdomain_data=ft)
        self.dS_sheet = forms.sheet_measure(msh, ft, self.options.sheet_quadrature_degree)
        cal = self.calibration
        self.E = [fem.Constant(msh, default_scalar_type(e)) for e in cal["energy_eV"]]
        self.D = [
            fem.Constant(msh, default_scalar_type(s.dos_J_m2 * DOS_SCALE))
            for s in self.section.sheets
        ]
        self.sheet_tags = [TAGS3["sheet0"] + i for i in range(len(self.section.sheets))]
        u, v = self.phi, ufl.TestFunction(self.V)
        # the cross-section's residual term by term (section/solver.py), in 3D
        F = forms.dielectric(u, v, self.eps, self.dx, scale=C_EPS)
        F -= self.q_lines("+") * v("+") * self.dS((TAGS3["levels"], *self.sheet_tags))
        F -= self.q_lines * v * self.ds((TAGS3["exposed"], TAGS3["bottom"]))
        F -= self.sigma * v * self.ds(TAGS3["exposed"])
        for E, D, tag in zip(self.E, self.D, self.sheet_tags, strict=True):
            density = forms.thomas_fermi_density(u("+"), E, D, self.kT)
            F += forms.sheet(density, v, self.dS_sheet(tag))
        # gates on a dielectric: the metal potential is a Constant of the Robin term
        self._metal = [fem.Constant(msh, default_scalar_type(0.0)) for _ in self.layout.gates]
        for i, c in enumerate(self._gate_layer):
            if c is not None:
                F += forms.series_layer(u, v, c, self.ds(TAGS3["gate0"] + i), metal=self._metal[i])
        self.F = F
        from dolfinx.fem.petsc import NonlinearProblem

        o = self.options
        opts = {
            "snes_type": "newtonls",
            "snes_linesearch_type": "bt",
            "snes_rtol": o.rtol,
            "snes_atol": o.atol,
            "snes_stol": 0.0,
            "snes_max_it": o.max_it,
        } | _krylov_options(o.ksp_rtol)
        self.problem = NonlinearProblem(
            self.F, u, bcs=[self.bc], petsc_options_prefix=f"qh_l3d_{id(self)}_", petsc_options=opts
        )
        self._history: list[float] = []
        self.problem.solver.setMonitor(lambda _s, _it, norm: self._history.append(float(norm)))

    # ------------------------------------------------------------------ solving
    def _set_bc_values(self, volts: dict[str, float]) -> None:
        barrier = self.section.gate_barrier_J / sc.e
        for dofs, val in self._fixed_groups:
            self._g.x.array[dofs] = val
        for i, (g, dofs) in enumerate(zip(self.layout.gates, self._gate_dofs, strict=True)):
            if self._gate_layer[i] is None:
                self._g.x.array[dofs] = volts[g.name] - barrier
            else:  # behind its dielectric: the Robin term's metal potential
                self._metal[i].value = volts[g.name] - barrier

    def _newton(self) -> tuple[bool, int]:
        self._history.clear()
        try:
            self.problem.solve()
        except RuntimeError:
            return False, self.problem.solver.getIterationNumber()
        snes = self.problem.solver
        ok = snes.getConvergedReason() > 0 and bool(np.all(np.isfinite(self.phi.x.array)))
        from mpi4py import MPI

        return bool(self.comm.allreduce(ok, op=MPI.LAND)), snes.getIterationNumber()

    def solve(self, voltages: dict[str, float] | None = None) -> int:
        """Solve at the layout's voltages changed by ``voltages`` (gate name -> V).

        Warm-starts from the previous solution; a cold start runs Newton at the target temperature
        from the far-field column and falls back to a temperature continuation.

        Returns
        -------
        int
            Newton iterations.

        Raises
        ------
        ConvergenceError
            Newton failed (residual history in e/nm).
        """
        t0 = time.perf_counter()
        volts = dict(self.voltages)
        for name, val in (voltages or {}).items():
            self.layout.gate(name)
            volts[name] = float(val)
        self._set_bc_values(volts)
        its = 0
        ok = False
        if self._solved:
            self.phi.x.array[self._bc_dofs] = self._g.x.array[self._bc_dofs]
            self.phi.x.scatter_forward()
            self.kT.value = self.kT_target_eV
            ok, its = self._newton()
        if not ok:
            ok, n = self._cold()
            its += n
        if not ok:
            raise ConvergenceError("3D Thomas–Fermi Newton", its, self._history, "e/nm")
        self._solved = True
        self.voltages = volts
        self.timings["solve"] = time.perf_counter() - t0
        return its

    def _column_guess(self) -> None:
        self.phi.x.array[:] = self.calibration["phi_V"][self._dof_level]
        self.phi.x.array[self._bc_dofs] = self._g.x.array[self._bc_dofs]
        self.phi.x.scatter_forward()

    def _cold(self) -> tuple[bool, int]:
        self._column_guess()
        self.kT.value = self.kT_target_eV
        ok, its = self._newton()
        if ok:
            return True, its
        self._column_guess()
        kT = max(self.options.kT_start_eV, self.kT_target_eV)
        while True:
            self.kT.value = kT
            ok, n = self._newton()
            its += n
            if not ok or kT <= self.kT_target_eV:
                return ok, its
            kT = max(kT / self.options.kT_factor, self.kT_target_eV)

    # ------------------------------------------------------------------ results
    def gather_levels(self, values: np.ndarray, levels=None) -> np.ndarray:
        """A nodal array (owned + ghost dofs) gathered as (levels, plane nodes) on every rank.

        ``levels`` (level indices) gathers only those rows, shape (len(levels), plane nodes):
        the sheets' rows are a few percent of the field, and gathering the whole 3D field on every
        rank would undo the distribution (memory and traffic grow with the total dofs).
        """
        n = self.n_owned
        k, p, val = self._dof_level[:n], self._dof_plane[:n], values[:n]
        if levels is not None:
            rows = np.full(self.levels_m.size, -1, dtype=np.int64)
            rows[np.asarray(levels, dtype=np.int64)] = np.arange(len(levels))
            keep = rows[k] >= 0
            k, p, val = rows[k[keep]], p[keep], val[keep]
        parts = self.comm.allgather((k.copy(), p.copy(), val.copy()))
        n_rows = self.levels_m.size if levels is None else len(levels)
        out = np.full((n_rows, self.plane.num_nodes), np.nan)
        for kk, pp, vv in parts:
            out[kk, pp] = vv
        return out

    def sheet_potentials(self) -> np.ndarray:
        """phi on each sheet (V), shape (S, plane nodes), identical on every rank."""
        return self.gather_levels(self.phi.x.array, self.sheet_level)

    def sheet_densities(self) -> np.ndarray:
        """Thomas–Fermi density of each sheet on the plane nodes (m^-2), shape (S, Np)."""
        phi = self.sheet_potentials()
        kT = self.kT_target_eV * sc.e
        out = []
        for i, s in enumerate(self.section.sheets):
            e_rel = (phi[i] - self.calibration["energy_eV"][i]) * sc.e
            out.append(s.dos_J_m2 * kT * np.logaddexp(0.0, e_rel / kT))
        return np.array(out)

    def sheet_dos_factor(self) -> np.ndarray:
        """dn_w/d(e phi) / D_w = sigmoid((phi - E_w)/kT) on the plane nodes, shape (S, Np)."""
        phi = self.sheet_potentials()
        a = (phi - np.asarray(self.calibration["energy_eV"])[:, None]) / self.kT_target_eV
        return 0.5 * (1.0 + np.tanh(0.5 * a))

    def _sheet_weight_functions(self, masks: list[np.ndarray] | None):
        """P1 functions sigmoid * mask per sheet, from plane-node arrays."""
        from dolfinx import fem

        fac = self.sheet_dos_factor()
        funcs = []
        for i in range(len(self.section.sheets)):
            w = fac[i] if masks is None else fac[i] * masks[i]
            f = fem.Function(self.V)
            f.x.array[:] = 0.0
            on = self._dof_level == self.sheet_level[i]
            f.x.array[on] = w[self._dof_plane[on]]
            f.x.scatter_forward()
            funcs.append(f)
        return funcs

    def _linear_operator(self, weights):
        import ufl

        from qhdesign.fem import forms

        u, v = ufl.TrialFunction(self.V), ufl.TestFunction(self.V)
        a = forms.dielectric(u, v, self.eps, self.dx, scale=C_EPS)
        for D, tag, w in zip(self.D, self.sheet_tags, weights, strict=True):
            # the Jacobian of the Thomas-Fermi sheet: D sigmoid((phi - E)/kT) per volt
            a += forms.sheet(forms.linear_sheet_density(D * w("+"), u("+")), v, self.dS_sheet(tag))
        for i, c in enumerate(self._gate_layer):  # gates on a dielectric, metal grounded
            if c is not None:
                a += forms.series_layer(u, v, c, self.ds(TAGS3["gate0"] + i))
        return a

    def linear_response(self, dirichlet: list[tuple[np.ndarray, float]], masks=None):
        """Solve the linearised problem with given Dirichlet values (others 0 on every Dirichlet
        part of the nonlinear problem, and on the extra dof sets in ``dirichlet``).

        Parameters
        ----------
        dirichlet
            (local dof indices, value) pairs; every gate and fixed part not listed is 0. The
            dofs of a gate on a dielectric (the array :meth:`gate_dofs` returns) set that gate's
            metal potential behind its layer (a Robin source), not a Dirichlet value.
        masks
            Per sheet, a plane-node array multiplying the sheet's linear Thomas–Fermi term.

        Returns
        -------
        (solution Function, bilinear form)
        """
        import ufl
        from dolfinx import default_scalar_type, fem
        from dolfinx.fem.petsc import LinearProblem

        weights = self._sheet_weight_functions(masks)
        a = self._linear_operator(weights)
        from qhdesign.fem import forms

        g = fem.Function(self.V)
        g.x.array[:] = 0.0
        v = ufl.TestFunction(self.V)
        L = fem.Constant(self.mesh, default_scalar_type(0.0)) * v * self.dx
        extra = []
        for dofs, val in dirichlet:
            i = next((k for k, d in enumerate(self._gate_dofs) if d is dofs), None)
            if i is not None and self._gate_layer[i] is not None:
                # a driven gate behind its dielectric: c V v on its facets (the Robin source)
                metal = fem.Constant(self.mesh, default_scalar_type(val))
                L += forms.series_layer(metal, v, self._gate_layer[i], self.ds(TAGS3["gate0"] + i))
                continue
            g.x.array[dofs] = val
            extra.append(dofs)
        all_dofs = np.unique(np.concatenate([self._bc_dofs, *extra])).astype(np.int32)
        bc = fem.dirichletbc(g, all_dofs)
        prob = LinearProblem(
            a,
            L,
            bcs=[bc],
            petsc_options_prefix=f"qh_l3d_lin_{id(self)}_",
            petsc_options=_krylov_options(self.options.ksp_rtol),
        )
        u = prob.solve()
        if isinstance(u, tuple):
            u = u[0]
        return u, a

    def energy(self, a, u, w) -> float:
        """a(u, w) summed over ranks (e V for u, w in V)."""
        import ufl
        from dolfinx import fem

        form = ufl.replace(a, {a.arguments()[1]: u, a.arguments()[0]: w})
        local = fem.assemble_scalar(fem.form(form))
        from mpi4py import MPI

        return float(self.comm.allreduce(local, op=MPI.SUM))

    def plane_dofs(self, sheet: int, node_mask: np.ndarray) -> np.ndarray:
        """Local dofs on sheet ``sheet`` whose plane node is selected by ``node_mask`` (Np,)."""
        on = self._dof_level == self.sheet_level[sheet]
        return np.nonzero(on & node_mask[self._dof_plane])[0].astype(np.int32)

    def gate_dofs(self, name: str) -> np.ndarray:
        for g, d in zip(self.layout.gates, self._gate_dofs, strict=True):
            if g.name == name:
                return d
        raise InputError(f"no gate '{name}'", source=self.layout.source)

    def gate_dielectric(self, name: str) -> tuple[float, float]:
        """The dielectric under gate ``name``: (thickness m, relative permittivity); (0, 1) for
        metal on the semiconductor."""
        g = self.layout.gate(name)
        return _layer_of(g, self.section)

    def write_fields(self, path) -> None:
        """Write the mesh, phi (V) and the permittivity to XDMF (lengths in nm)."""
        from qhdesign.fem.backend import write_fields

        write_fields(path, self.comm, self.mesh, self.phi, self.eps)


def _layer_of(gate, section) -> tuple[float, float]:
    """(t, eps_d) under a gate: the layout's own values, else the stack's."""
    t = gate.dielectric_thickness_m
    eps = gate.dielectric_permittivity
    if t is None:
        t = float(section.gate_dielectric_thickness_m)
        eps = float(section.gate_dielectric_permittivity) if eps is None else eps
    return (float(t), float(eps)) if t > 0 else (0.0, 1.0)


def _layer_capacitance(gate, section):
    """eps_0 eps_d / t of a gate's dielectric in the form's units (C_EPS eps_d / (t / nm)), or
    None for metal on the semiconductor (a Dirichlet gate)."""
    t, eps = _layer_of(gate, section)
    return C_EPS * eps / (t / NM) if t > 0 else None
