"""Nonlinear Thomas–Fermi–Poisson solve of a cross-section with DOLFINx 0.11 and PETSc SNES.

Weak form (mesh lengths in nm, potential in V, charges in units of e):

    F(phi; v) = int c eps_r grad(phi).grad(v) dx
              + sum_w int n_w(phi) v dS_w          (electron sheets, Thomas–Fermi)
              - int q_lines v dS_levels - int q_lines v ds   (frozen donors, lumped on levels)
              - int sigma_s v ds_exposed           (frozen surface charge, if not pinned)

with c = eps_0/e (e V^-1 nm^-1) and n_w(phi) = D_w kT softplus((phi - E_w)/kT) in nm^-2. The
sheet term uses vertex quadrature: the sheet density is nodal (what the line profiles report) and
its Jacobian is a positive diagonal, so the Jacobian is symmetric positive definite (CG + GAMG
works for large meshes; LU by MUMPS for small ones). Dirichlet: gate metal (V_g - Phi_B/e),
a pinned exposed surface, a back gate; test hooks allow an exact potential on the outer boundary
and metal on a sheet line (coplanar gate).

Every stepped parameter (kT, E_w, D_w, sigma_s) is a ``fem.Constant`` and the gate potential is a
Dirichlet function, so a gate sweep or a temperature continuation never recompiles a form.

References
----------
PETSc SNES Newton line search with backtracking; DOLFINx ``fem.petsc.NonlinearProblem``.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from qhdesign.errors import ConvergenceError, InputError
from qhdesign.fem.tensor_mesh import NM

from .geometry import TAGS, GateLayout, MeshOptions, StructuredGrid, build_grid, build_mesh
from .model import CrossSection, calibrate, thomas_fermi_density

__all__ = ["CrossSectionSolver", "FieldSolution", "SolverOptions"]

#: eps_0/e in e V^-1 nm^-1
C_EPS = sc.epsilon_0 / sc.e * NM
#: J^-1 m^-2 -> eV^-1 nm^-2
DOS_SCALE = sc.e * NM**2
#: m^-2 -> nm^-2 ; C/m^2 -> e/nm^2
AREA_SCALE = NM**2


@dataclass(frozen=True)
class SolverOptions:
    """Newton and linear-solver settings.

    Attributes
    ----------
    exposed
        ``"frozen"`` (frozen surface charge on the exposed surface), ``"pinned"``, or None for
        the cross-section's own ``surface_mode``.
    linear_solver
        ``"auto"`` (MUMPS LU below ``direct_max_dofs``, CG + GAMG above), ``"lu"``, ``"gamg"``.
    kT_start_eV, kT_factor
        Temperature continuation of a cold start: kT from max(kT_start, kT) down by ``kT_factor``.
    rtol, atol, max_it
        SNES relative / absolute residual tolerances (residual in e/nm) and iteration cap.
    floor
        Residual (e/nm) below which a stalled line search still counts as converged (round-off).
    """

    exposed: str | None = None
    linear_solver: str = "auto"
    direct_max_dofs: int = 300_000
    kT_start_eV: float = 2.0e-3
    kT_factor: float = 10.0
    rtol: float = 1e-10
    atol: float = 1e-12
    floor: float = 1e-10
    max_it: int = 60
    sheet_quadrature_degree: int = 8


@dataclass(frozen=True, eq=False)
class FieldSolution:
    """A solved cross-section, gathered on every rank (identical serial and parallel).

    Attributes
    ----------
    x_m
        Grid x-nodes (m), shape (nx,).
    z_m
        Grid z-levels (m), shape (nz,).
    phi_V
        Potential on the grid (V), shape (nz, nx); row k is depth z_m[k].
    sheet_names
        Names of the sheets.
    density_m2
        Sheet densities (m^-2), shape (S, nx).
    bulk_density_m2
        1D (far-field target) densities (m^-2), shape (S,).
    gate_potential_V
        Dirichlet potential of the gates (V).
    iterations, residuals
        Newton iterations of the last solve and its residual history (e/nm).
    """

    x_m: np.ndarray
    z_m: np.ndarray
    phi_V: np.ndarray
    sheet_names: tuple[str, ...]
    sheet_level: np.ndarray
    density_m2: np.ndarray
    bulk_density_m2: np.ndarray
    sheet_energy_eV: np.ndarray
    gate_voltage_V: float
    iterations: int
    residuals: tuple[float, ...]
    timings_s: dict = field(default_factory=dict)
    read_level: np.ndarray | None = None

    def sheet_potential(self, i: int) -> np.ndarray:
        """phi that sheet i's density follows (V), shape (nx,): on the sheet's level, or on its
        read level for a law sheet read above its charge."""
        level = self.sheet_level if self.read_level is None else self.read_level
        return self.phi_V[level[i]]

    def in_plane_field(self, i: int) -> np.ndarray:
        """E_x = -dphi/dx along sheet i (V/m), shape (nx,)."""
        return -np.gradient(self.sheet_potential(i), self.x_m)


class CrossSectionSolver:
    """Build the mesh and forms once; solve for any gate voltage with warm starts.

    Parameters
    ----------
    section
        Layers, sheets and frozen charges.
    layout
        Gate layout.
    mesh_options, options
        Resolution and solver settings.
    comm
        MPI communicator (default ``MPI.COMM_WORLD``).
    outer_dirichlet
        Validation hook: ``f(x_m, z_m) -> phi`` imposed on the sides, the bottom and the exposed
        surface (for comparison with exact solutions of unbounded problems).
    sheet_metal
        Validation hook: ``[(sheet index, x_max_m)]``: the sheet line for x <= x_max is metal at
        the gate potential (a coplanar gate).
    axisymmetric
        Read x as the radius r (the mesh must start at r = 0: ``MeshOptions(x_min_m=0)``) and
        weight every form by r / r_max (the axis needs no condition). Used by the island's
        operating point (:mod:`qhdesign.island.operating`).
    """

    def __init__(
        self,
        section: CrossSection,
        layout: GateLayout,
        mesh_options: MeshOptions | None = None,
        options: SolverOptions | None = None,
        *,
        comm=None,
        outer_dirichlet: Callable[[np.ndarray, np.ndarray], np.ndarray] | None = None,
        sheet_metal: list[tuple[int, float]] | None = None,
        axisymmetric: bool = False,
    ):
        from qhdesign.fem.backend import load

        MPI, _ = load()

        self.section = section
        self.layout = layout
        self.mesh_options = mesh_options or MeshOptions()
        self.options = options or SolverOptions()
        if self.options.exposed is None:
            from dataclasses import replace

            self.options = replace(self.options, exposed=section.surface_mode)
        if self.options.exposed not in ("frozen", "pinned"):
            raise InputError("exposed surface must be 'frozen' or 'pinned'", key="exposed")
        self.comm = comm if comm is not None else MPI.COMM_WORLD
        self._outer = outer_dirichlet
        self._sheet_metal = list(sheet_metal or [])
        self.axisymmetric = bool(axisymmetric)
        self.timings: dict[str, float] = {}

        t0 = time.perf_counter()
        self.grid: StructuredGrid = build_grid(section, layout, self.mesh_options)
        eps_int = np.asarray(section.layer_permittivity)[self.grid.layer_of_interval]
        self.calibration = calibrate(section, self.grid.z_m, eps_int, exposed=self.options.exposed)
        charged = np.nonzero(self.calibration["line_charge_C_m2"])[0]
        data = build_mesh(self.grid, section, self.comm, charged_levels=charged)
        self.timings["mesh"] = time.perf_counter() - t0
        self.mesh, self.cell_tags, self.facet_tags = data.mesh, data.cell_tags, data.facet_tags
        if self.axisymmetric and abs(self.grid.x_m[0]) > 0.0:
            raise InputError("an axisymmetric solve needs a mesh from r = 0 (x_min_m = 0)")

        t0 = time.perf_counter()
        self._setup_spaces()
        self._setup_bcs()
        self._setup_forms()
        self.timings["forms"] = time.perf_counter() - t0
        self._solved = False
        self.gate_voltage_V = 0.0

    # ------------------------------------------------------------------ set-up
    def _setup_spaces(self) -> None:
        from dolfinx import fem

        msh = self.mesh
        self.V = fem.functionspace(msh, ("Lagrange", 1))
        self.num_dofs = self.V.dofmap.index_map.size_global
        coords = self.V.tabulate_dof_coordinates()
        self._dof_x_m = coords[:, 0] * NM
        self._dof_z_m = -coords[:, 1] * NM
        # grid indices of every local dof (the mesh vertices are the grid nodes)
        self._dof_ix = _nearest(self.grid.x_m, self._dof_x_m)
        self._dof_iz = _nearest(self.grid.z_m, self._dof_z_m)

        Q = fem.functionspace(msh, ("DG", 0))
        self.eps = fem.Function(Q)
        layer = self.cell_tags.values - 1
        eps_layers = np.asarray(self.section.layer_permittivity, dtype=float)
        self.eps.x.array[self.cell_tags.indices] = eps_layers[layer]
        self.eps.x.scatter_forward()

        self.q_lines = fem.Function(self.V)
        q = self.calibration["line_charge_C_m2"] / sc.e * AREA_SCALE  # e/nm^2 per level
        self.q_lines.x.array[:] = q[self._dof_iz]
        self.phi = fem.Function(self.V, name="phi_V")
        self._g = fem.Function(self.V)

    def _setup_bcs(self) -> None:
        from dolfinx import fem

        ft = self.facet_tags
        V = self.V

        def dofs_of(tag: int) -> np.ndarray:
            return fem.locate_dofs_topological(V, 1, ft.find(tag))

        # a gate on a dielectric is a Robin condition (series capacitance), not a Dirichlet one
        on_metal = not self.section.gate_dielectric_thickness_m > 0.0
        groups: list[tuple[np.ndarray, str]] = [(dofs_of(TAGS["gate"]), "gate")] if on_metal else []
        if self.options.exposed == "pinned" and self._outer is None:
            groups.append((dofs_of(TAGS["exposed"]), "surface"))
        if self.section.bottom == "gate" and self._outer is None:
            groups.append((dofs_of(TAGS["bottom"]), "bottom"))
        if self._outer is not None:
            outer = np.unique(
                np.concatenate([dofs_of(TAGS[t]) for t in ("sides", "bottom", "exposed")])
            )
            groups.append((outer, "outer"))
        for i, x_max in self._sheet_metal:
            d = dofs_of(TAGS["sheet0"] + i)
            groups.append((d[self._dof_x_m[d] <= x_max + 1e-15], "gate"))
        self._bc_groups = groups
        parts = [g[0] for g in groups] or [np.zeros(0, dtype=np.int32)]
        all_dofs = np.unique(np.concatenate(parts)).astype(np.int32)
        self._bc_dofs = all_dofs
        self.bc = fem.dirichletbc(self._g, all_dofs)

    def _gate_potential(self, gate_voltage_V: float) -> float:
        return gate_voltage_V - self.section.gate_barrier_J / sc.e

    def _set_bc_values(self, gate_voltage_V: float) -> None:
        """Dirichlet values; a dof shared by groups of different value gets their mean."""
        if hasattr(self, "v_gate"):
            self.v_gate.value = self._gate_potential(gate_voltage_V)
        total = np.zeros(self._g.x.array.size)
        count = np.zeros(self._g.x.array.size)
        for dofs, kind in self._bc_groups:
            if kind == "gate":
                val = np.full(dofs.size, self._gate_potential(gate_voltage_V))
            elif kind == "surface":
                val = np.full(dofs.size, self.section.surface_potential_V)
            elif kind == "bottom":
                val = np.full(dofs.size, self.section.bottom_potential_V)
            else:
                val = np.asarray(self._outer(self._dof_x_m[dofs], self._dof_z_m[dofs]), float)
            np.add.at(total, dofs, val)
            np.add.at(count, dofs, 1.0)
        mask = count > 0
        self._g.x.array[mask] = total[mask] / count[mask]

    def _setup_forms(self) -> None:
        import ufl
        from dolfinx import default_scalar_type, fem
        from dolfinx.fem.petsc import NonlinearProblem

        from qhdesign.fem import forms, petsc

        msh, ft = self.mesh, self.facet_tags
        u, v = self.phi, ufl.TestFunction(self.V)
        cal = self.calibration
        kT = sc.k * self.section.temperature_K / sc.e
        self.kT = fem.Constant(msh, default_scalar_type(kT))
        self.kT_target_eV = kT
        self.sigma = fem.Constant(msh, default_scalar_type(0.0))
        if self.options.exposed == "frozen":
            self.sigma.value = cal["surface_charge_C_m2"] / sc.e * AREA_SCALE
        dx = ufl.Measure("dx", domain=msh, subdomain_data=self.cell_tags)
        dS = ufl.Measure("dS", domain=msh, subdomain_data=ft)
        ds = ufl.Measure("ds", domain=msh, subdomain_data=ft)
        dS_v = forms.sheet_measure(msh, ft, self.options.sheet_quadrature_degree)
        sheet_tags = tuple(TAGS["sheet0"] + i for i in range(len(self.section.sheets)))
        # axisymmetric: every integrand carries r (scaled to <= 1 so residual norms keep scale)
        wr = self.radial_weight()
        wS = 1.0 if wr is None else wr("+")
        F = forms.dielectric(u, v, self.eps, dx, scale=C_EPS, r=wr)
        F -= self.q_lines("+") * v("+") * wS * dS((TAGS["levels"], *sheet_tags))
        F -= self.q_lines * v * (1.0 if wr is None else wr) * ds((TAGS["exposed"], TAGS["bottom"]))
        F -= self.sigma * v * (1.0 if wr is None else wr) * ds(TAGS["exposed"])
        self.v_gate = fem.Constant(msh, default_scalar_type(0.0))
        t_d = self.section.gate_dielectric_thickness_m
        if t_d > 0.0:
            # gate dielectric as a series capacitance per area: the displacement through the
            # thin, charge-free layer eps_d (V_metal - phi)/t enters the surface under the gate
            # (lengths in nm like the mesh)
            c_d = C_EPS * self.section.gate_dielectric_permittivity / (t_d / NM)
            F += c_d * (u - self.v_gate) * v * (1.0 if wr is None else wr) * ds(TAGS["gate"])
        self.E = []
        self.D = []
        # sheets with a tabulated law: nodal density and slope (vertex quadrature), refreshed
        # from phi before every residual and Jacobian assembly; the Jacobian gets their slope
        dS_n = forms.sheet_measure(msh, ft, 0)
        du = ufl.TrialFunction(self.V)
        J_laws = []
        self._laws: list[tuple[int, np.ndarray, object, object]] = []
        self._remote: dict[int, dict] = {}
        for i, s in enumerate(self.section.sheets):
            E = fem.Constant(msh, default_scalar_type(cal["energy_eV"][i]))
            D = fem.Constant(msh, default_scalar_type(s.dos_J_m2 * DOS_SCALE))
            self.E.append(E)
            self.D.append(D)
            if s.law is not None:
                n_fun = fem.Function(self.V)
                dn_fun = fem.Function(self.V)
                dofs = fem.locate_dofs_topological(self.V, 1, ft.find(sheet_tags[i]))
                self._laws.append((i, dofs, n_fun, dn_fun))
                if self.grid.read_level[i] != self.grid.sheet_level[i]:
                    # read above its charge: residual and Jacobian entries are added by hand
                    self._setup_remote_read(i)
                    continue
                r_lump = None if wr is None else self._lumped_radius(sheet_tags[i], dofs)
                F += forms.sheet(n_fun("+"), v, dS_n(sheet_tags[i]), r=r_lump)
                J_laws.append(forms.sheet(dn_fun("+") * du("+"), v, dS_n(sheet_tags[i]), r=r_lump))
                continue
            density = forms.thomas_fermi_density(u("+"), E, D, self.kT)
            r_sheet = wr
            if wr is not None and self.options.sheet_quadrature_degree == 0:
                dofs = fem.locate_dofs_topological(self.V, 1, ft.find(sheet_tags[i]))
                r_sheet = self._lumped_radius(sheet_tags[i], dofs)
            F += forms.sheet(density, v, dS_v(sheet_tags[i]), r=r_sheet)
        J = None
        if self._laws:
            J = ufl.derivative(F, u, du)
            for term in J_laws:
                J = J + term
        use_lu = self.options.linear_solver == "lu" or (
            self.options.linear_solver == "auto" and self.num_dofs <= self.options.direct_max_dofs
        )
        self.linear_solver = "lu" if use_lu else "gamg"
        opts = petsc.newton(self.options.rtol, self.options.atol, self.options.max_it)
        opts |= petsc.LU_MUMPS if use_lu else petsc.CG_GAMG
        P = None
        if self._remote and not use_lu:
            # a law read above its charge makes J non-symmetric: GMRES, preconditioned by GAMG on
            # the symmetric part with each such sheet's slope put on its own (shallow) level
            opts["ksp_type"] = "gmres"
            opts["ksp_gmres_restart"] = 100
            P = J
            for i in self._remote:
                dn_pre = fem.Function(self.V)
                self._remote[i]["precond"] = dn_pre
                lev = self._remote[i]["levels"]["a"]
                r_lump = None if wr is None else self._lumped_radius(sheet_tags[i], lev["dofs_all"])
                P = P + forms.sheet(dn_pre("+") * du("+"), v, dS_n(sheet_tags[i]), r=r_lump)
        self.problem = NonlinearProblem(
            F,
            u,
            bcs=[self.bc],
            J=J,
            P=P,
            petsc_options_prefix=petsc.options_prefix("section"),
            petsc_options=opts,
        )
        snes = self.problem.solver
        if self._laws:
            self._hook_laws(snes)
        self._history: list[float] = []
        snes.setMonitor(lambda _snes, _it, norm: self._history.append(float(norm)))

    def _lumped_radius(self, tag: int, dofs: np.ndarray):
        """The radial weight of a law sheet under vertex quadrature: the P1 function whose
        nodal values are int(hat_i r dS) / int(hat_i dS) on the sheet line, so that the lumped
        sheet term holds the exact int(hat_i r) at every node (the plain vertex rule would give
        the axis node no weight at all, and its density no equation)."""
        import ufl
        from dolfinx import fem
        from dolfinx.fem.petsc import assemble_vector

        from qhdesign.fem import forms

        dS = forms.sheet_measure(self.mesh, self.facet_tags, 2)
        v = ufl.TestFunction(self.V)
        wr = self.radial_weight()
        out = fem.Function(self.V)
        vals = []
        for integrand in (v("+") * wr("+"), v("+")):
            b = assemble_vector(fem.form(integrand * dS(tag)))
            b.ghostUpdate(addv=_add(), mode=_reverse())
            b.ghostUpdate(addv=_insert(), mode=_forward())
            with b.localForm() as loc:
                vals.append(loc.array.copy())
            b.destroy()
        num, den = vals
        out.x.array[dofs] = num[dofs] / np.where(den[dofs] > 0, den[dofs], 1.0)
        return out

    def _node_weights(self) -> np.ndarray:
        """int(hat_i) along a level for every x-node (nm), times r/r_max if axisymmetric: the
        lumped weight of a sheet node, the vertex rule's own (exact in r)."""
        x = self.grid.x_m / NM
        w = np.zeros(x.size)
        h = np.diff(x)
        if not self.axisymmetric:
            w[:-1] += 0.5 * h
            w[1:] += 0.5 * h
            return w
        a, b = x[:-1], x[1:]
        w[1:] += h * (2.0 * b + a) / 6.0  # rising hat on [a, b], node b
        w[:-1] += h * (2.0 * a + b) / 6.0  # falling hat on [a, b], node a
        return w / x[-1]

    def _setup_remote_read(self, i: int) -> None:
        """A law sheet that reads phi on another level (its well's upper interface) and puts its
        charge at the law's centroid, split between its shallowest and deepest centroid levels.
        Maps every owned node of those levels to the read node of the same x (gathered over the
        ranks) and keeps the lumped weights for residual and Jacobian."""
        imap = self.V.dofmap.index_map
        n_own = imap.size_local
        own = np.arange(n_own)
        kr = int(self.grid.read_level[i])
        read_own = own[self._dof_iz[:n_own] == kr]
        glob = imap.local_to_global(read_own.astype(np.int32))
        parts = self.comm.allgather((self._dof_ix[read_own].copy(), glob.copy()))
        read_global = np.full(self.grid.x_m.size, -1, dtype=np.int64)
        for ix, g in parts:
            read_global[ix] = g
        weights = self._node_weights()
        ka = int(self.grid.sheet_level[i])
        kb = int(self.grid.deep_level[i]) if self.grid.deep_level is not None else ka
        levels = {}
        for name, k in (("a", ka), ("b", kb)):
            if name == "b" and k == ka:
                continue
            every = np.nonzero(self._dof_iz == k)[0].astype(np.int32)
            rows = own[self._dof_iz[:n_own] == k]
            rows = rows[~np.isin(rows, self._bc_dofs)]
            ix = self._dof_ix[rows]
            levels[name] = {
                "rows_local": rows,
                "rows_global": imap.local_to_global(rows.astype(np.int32)).astype(np.int64),
                "ix": ix,
                "cols_global": read_global[ix],
                "weight": weights[ix],
                "dofs_all": every,
                "ix_all": self._dof_ix[every],
            }
        s = self.section.sheets[i]
        z_a = float(self.grid.z_m[ka])
        z_b = float(self.grid.z_m[kb])
        self._remote[i] = {"read_own": read_own, "levels": levels, "z_a": z_a, "z_b": z_b}
        if s.law.centroid_m is None or kb == ka:
            self._remote[i]["z_b"] = z_a  # all charge on the sheet's own level

    def _remote_terms(self, i: int):
        """Per deposit level: (level dict, charge n w (nm^-2), d(n w)/dphi_read (nm^-2/V))."""
        r = self._remote[i]
        law = self.section.sheets[i].law
        phi_r = self._read_potential(i)
        out = []
        span = r["z_b"] - r["z_a"]
        for name, lev in r["levels"].items():
            x = phi_r[lev["ix"]] - float(self.E[i].value)
            n = law.density(x) * AREA_SCALE
            dn = law.slope(x) * AREA_SCALE
            if span > 0.0:
                wb = np.clip((law.centroid(x) - r["z_a"]) / span, 0.0, 1.0)
                dwb = law.centroid_slope(x) / span
                inside = (law.centroid(x) > r["z_a"]) & (law.centroid(x) < r["z_b"])
                dwb = np.where(inside, dwb, 0.0)
            else:
                wb = np.zeros_like(x)
                dwb = np.zeros_like(x)
            if name == "a":
                w, dw = 1.0 - wb, -dwb
            else:
                w, dw = wb, dwb
            out.append((lev, n * w, dn * w + n * dw))
        return out

    def _add_remote_residual(self, b) -> None:
        """Add the charge n_i w_i l_i of every law sheet read above its charge to b."""
        if not self._remote:
            return
        with b.localForm() as loc:
            arr = loc.array
            for i in self._remote:
                for lev, charge, _ in self._remote_terms(i):
                    np.add.at(arr, lev["rows_local"], charge * lev["weight"])

    def _read_potential(self, i: int) -> np.ndarray:
        """phi on the read line of law sheet i at every x-node (gathered from all ranks)."""
        r = self._remote[i]
        ro = r["read_own"]
        parts = self.comm.allgather((self._dof_ix[ro].copy(), self.phi.x.array[ro].copy()))
        out = np.full(self.grid.x_m.size, np.nan)
        for ix, val in parts:
            out[ix] = val
        return out

    def _update_laws(self) -> None:
        """Nodal density (nm^-2) and slope (nm^-2/V) of every law sheet from the current phi
        (owned and ghost dofs: phi's ghosts are current, so no scatter is needed); a sheet that
        reads above its charge takes phi from its read line at the same x."""
        phi = self.phi.x.array
        for i, dofs, n_fun, dn_fun in self._laws:
            law = self.section.sheets[i].law
            if i in self._remote:
                continue  # added to the residual and the Jacobian by hand
            x = phi[dofs] - float(self.E[i].value)
            n_fun.x.array[dofs] = law.density(x) * AREA_SCALE
            dn_fun.x.array[dofs] = law.slope(x) * AREA_SCALE

    def _update_remote_precond(self) -> None:
        """dn/dphi_read (nm^-2/V) of every law sheet read above its charge on all local dofs of
        its shallow level: the preconditioner's local stand-in for the read coupling."""
        for i, r in self._remote.items():
            pre = r.get("precond")
            if pre is None:
                continue
            lev = r["levels"]["a"]
            x = self._read_potential(i)[lev["ix_all"]] - float(self.E[i].value)
            pre.x.array[lev["dofs_all"]] = self.section.sheets[i].law.slope(x) * AREA_SCALE

    def _add_remote_jacobian(self, A) -> None:
        """Add d(n_i w_i l_i)/d(phi_read) of every law sheet read above its charge to A (owned,
        non-Dirichlet rows) and reassemble A."""
        from petsc4py import PETSc

        if not self._remote:
            return
        for i in self._remote:
            for lev, _, slope in self._remote_terms(i):
                vals = slope * lev["weight"]
                for row, col, val in zip(lev["rows_global"], lev["cols_global"], vals, strict=True):
                    A.setValue(int(row), int(col), float(val), addv=PETSc.InsertMode.ADD)
        A.assemble()

    def _hook_laws(self, snes) -> None:
        """Refresh the law sheets before DOLFINx assembles the residual or the Jacobian at x."""
        from dolfinx.fem.petsc import assign
        from dolfinx.la.petsc import _ghost_update
        from petsc4py import PETSc

        b, (f_func, f_args, f_kw) = snes.getFunction()
        A, P, (j_func, j_args, j_kw) = snes.getJacobian()

        def load(x):
            _ghost_update(x, PETSc.InsertMode.INSERT, PETSc.ScatterMode.FORWARD)
            assign(x, self.phi)
            self.phi.x.scatter_forward()
            self._update_laws()

        def residual(snes_, x, b_, *a, **kw):
            load(x)
            out = f_func(snes_, x, b_, *a, **kw)
            self._add_remote_residual(b_)
            return out

        def jacobian(snes_, x, A_, P_, *a, **kw):
            load(x)
            self._update_remote_precond()
            out = j_func(snes_, x, A_, P_, *a, **kw)
            self._add_remote_jacobian(A_)
            return out

        if self._remote:
            same = P is None or P.handle == A.handle
            A = self._with_remote_pattern(A)
            self.problem._A = A  # the matrix SNES assembles into (see NonlinearProblem.A)
            if same:
                P = A
            A.setOption(PETSc.Mat.Option.NEW_NONZERO_ALLOCATION_ERR, False)

        snes.setFunction(residual, b, args=f_args, kargs=f_kw)
        snes.setJacobian(jacobian, A, P, args=j_args, kargs=j_kw)

    def _with_remote_pattern(self, A0):
        """A copy of DOLFINx's Jacobian matrix whose preallocated pattern also holds the entries
        that couple a law sheet's charge levels to its read level (inserting them into A0 would
        make PETSc reallocate the matrix for each new entry on the first assembly)."""
        from dolfinx.fem.petsc import assemble_matrix
        from petsc4py import PETSc

        if not A0.assembled:  # the pattern DOLFINx preallocated: assemble once to read it
            assemble_matrix(A0, self.problem.J, bcs=[self.bc])
            A0.assemble()
        ai, aj, _ = A0.getValuesCSR()
        r0, _r1 = A0.getOwnershipRange()
        n = ai.size - 1
        extra_rows, extra_cols = [], []
        for r in self._remote.values():
            for lev in r["levels"].values():
                extra_rows.append(lev["rows_global"] - r0)
                extra_cols.append(lev["cols_global"])
        rows = np.concatenate([np.repeat(np.arange(n), np.diff(ai)), *extra_rows])
        cols = np.concatenate([aj.astype(np.int64), *extra_cols])
        key = np.unique(rows.astype(np.int64) * (A0.getSize()[1] + 1) + cols)
        rows = key // (A0.getSize()[1] + 1)
        cols = key % (A0.getSize()[1] + 1)
        ptr = np.zeros(n + 1, dtype=PETSc.IntType)
        np.add.at(ptr, rows + 1, 1)
        ptr = np.cumsum(ptr).astype(PETSc.IntType)
        A = PETSc.Mat().createAIJ(
            A0.getSizes(),
            csr=(ptr, cols.astype(PETSc.IntType), np.zeros(cols.size, dtype=PETSc.ScalarType)),
            comm=A0.getComm(),
        )
        A.setLGMap(*A0.getLGMap())
        A.setOptionsPrefix(A0.getOptionsPrefix())
        A.assemble()
        return A

    def radial_weight(self):
        """The weight of every integrand: r / r_max (UFL) if axisymmetric, else None."""
        import ufl

        if not self.axisymmetric:
            return None
        return ufl.SpatialCoordinate(self.mesh)[0] / (self.grid.x_m[-1] / NM)

    # ------------------------------------------------------------------ solving
    def _initial_guess(self, gate_voltage_V: float) -> None:
        self.phi.x.array[:] = self.calibration["phi_V"][self._dof_iz]
        self._set_bc_values(gate_voltage_V)
        self.phi.x.array[self._bc_dofs] = self._g.x.array[self._bc_dofs]
        self.phi.x.scatter_forward()

    def _newton(self) -> tuple[bool, int]:
        self._history.clear()
        self.problem.solve()
        snes = self.problem.solver
        reason = snes.getConvergedReason()
        last = self._history[-1] if self._history else np.inf
        # a line-search stall at the round-off floor counts as converged
        ok = (reason > 0 or last < self.options.floor) and np.all(np.isfinite(self.phi.x.array))
        return bool(self.comm.allreduce(ok, op=_land())), snes.getIterationNumber()

    def _continuation(self) -> int:
        kT_target = self.kT_target_eV
        kT = max(self.options.kT_start_eV, kT_target)
        total = 0
        while True:
            self.kT.value = kT
            ok, its = self._newton()
            total += its
            if not ok:
                raise ConvergenceError(
                    "2D Thomas–Fermi Newton",
                    its,
                    self._history,
                    "e/nm",
                    reason=f"kT = {kT * 1e3:.3g} meV in the temperature continuation",
                )
            if kT <= kT_target:
                return total
            kT = max(kT / self.options.kT_factor, kT_target)

    def solve(
        self,
        gate_voltage_V: float,
        *,
        warm: bool = True,
        initial: FieldSolution | None = None,
    ) -> FieldSolution:
        """Solve at a gate voltage (V).

        Parameters
        ----------
        gate_voltage_V
            Gate bias (V).
        warm
            Start from the last solution of this solver, if any.
        initial
            Start from a solution on another grid of the same cross-section (interpolated).

        A warm or interpolated start runs Newton at the target temperature directly and falls
        back to the temperature continuation from the 1D column if that fails.

        Raises
        ------
        ConvergenceError
            If Newton fails (with the residual history of the failing solve).
        """
        t0 = time.perf_counter()
        started = False
        if initial is not None:
            from scipy.interpolate import RegularGridInterpolator

            f = RegularGridInterpolator((initial.z_m, initial.x_m), initial.phi_V)
            pts = np.column_stack((self._dof_z_m, self._dof_x_m))
            lo = [initial.z_m[0], initial.x_m[0]]
            hi = [initial.z_m[-1], initial.x_m[-1]]
            self.phi.x.array[:] = f(np.clip(pts, lo, hi))
            started = True
        elif warm and self._solved:
            started = True
        its = 0
        if started:
            self._set_bc_values(gate_voltage_V)
            self.phi.x.array[self._bc_dofs] = self._g.x.array[self._bc_dofs]
            self.phi.x.scatter_forward()
            self.kT.value = self.kT_target_eV
            ok, its = self._newton()
            started = ok
        if not started:
            # cold start from the far-field column: Newton at the target temperature first
            # (a backtracking line search usually suffices), the continuation only if it fails
            self._initial_guess(gate_voltage_V)
            self.kT.value = self.kT_target_eV
            snes = self.problem.solver
            snes.setTolerances(max_it=min(25, self.options.max_it))
            try:
                ok, n_direct = self._newton()
            finally:
                snes.setTolerances(max_it=self.options.max_it)
            its += n_direct
            if not ok:
                self._initial_guess(gate_voltage_V)
                its += self._continuation()
        self._solved = True
        self.gate_voltage_V = float(gate_voltage_V)
        self.timings["solve"] = time.perf_counter() - t0
        return self._gather(its)

    def _gather(self, its: int) -> FieldSolution:
        n_own = self.V.dofmap.index_map.size_local
        local = (
            self._dof_iz[:n_own].copy(),
            self._dof_ix[:n_own].copy(),
            self.phi.x.array[:n_own].copy(),
        )
        parts = self.comm.allgather(local)
        nz, nx = self.grid.z_m.size, self.grid.x_m.size
        grid_phi = np.full((nz, nx), np.nan)
        for iz, ix, val in parts:
            grid_phi[iz, ix] = val
        kT = self.kT_target_eV * sc.e
        dens = []
        for i, s in enumerate(self.section.sheets):
            row = grid_phi[self.grid.read_level[i]]
            if s.law is not None:
                dens.append(s.law.reported(row - self.calibration["energy_eV"][i]))
                continue
            e_rel = (row - self.calibration["energy_eV"][i]) * sc.e
            dens.append(thomas_fermi_density(e_rel, s.dos_J_m2, kT))
        return FieldSolution(
            x_m=self.grid.x_m.copy(),
            z_m=self.grid.z_m.copy(),
            phi_V=grid_phi,
            sheet_names=tuple(s.name for s in self.section.sheets),
            sheet_level=self.grid.sheet_level.copy(),
            read_level=self.grid.read_level.copy(),
            density_m2=np.array(dens).reshape(len(self.section.sheets), nx),
            bulk_density_m2=np.array([s.density_m2 for s in self.section.sheets]),
            sheet_energy_eV=np.asarray(self.calibration["energy_eV"], dtype=float).copy(),
            gate_voltage_V=self.gate_voltage_V,
            iterations=int(its),
            residuals=tuple(self._history),
            timings_s=dict(self.timings),
        )

    def write_fields(self, path) -> None:
        """Write the mesh, the potential (V) and the permittivity map to XDMF (lengths in nm)."""
        from qhdesign.fem.backend import write_fields

        write_fields(path, self.comm, self.mesh, self.phi, self.eps)


def _nearest(nodes: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Index of the nearest node (nodes sorted)."""
    i = np.clip(np.searchsorted(nodes, values), 1, nodes.size - 1)
    left = np.abs(values - nodes[i - 1]) <= np.abs(nodes[i] - values)
    return np.where(left, i - 1, i)


def _land():
    from mpi4py import MPI

    return MPI.LAND


def _add():
    from petsc4py import PETSc

    return PETSc.InsertMode.ADD


def _insert():
    from petsc4py import PETSc

    return PETSc.InsertMode.INSERT


def _reverse():
    from petsc4py import PETSc

    return PETSc.ScatterMode.REVERSE


def _forward():
    from petsc4py import PETSc

    return PETSc.ScatterMode.FORWARD
