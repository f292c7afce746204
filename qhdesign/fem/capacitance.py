"""Axisymmetric (r, z) capacitance matrices of thin conductors in layered dielectrics (DOLFINx).

The linear electrostatics solver of the FEM engine (:mod:`qhdesign.fem`), used by the island
stage (:mod:`qhdesign.island`) and its validation problems
(isolated disk, coaxial disks, disk between grounded planes). Every object is a horizontal line
``z = const, r0 < r < r1`` (a disk or a ring in 3D):

- ``conductor`` lines are ideal conductors whose Maxwell capacitance matrix is computed;
- ``ground`` lines are grounded equipotentials (Dirichlet 0);
- ``sheet`` lines are compressible electron sheets held at the Fermi level through their contacts
  and treated in linear Thomas–Fermi response: a potential u on the sheet changes its charge by
  -e^2 D u (D: 2D density of states). This adds the quantum-capacitance term e^2 D u v on the
  sheet's interior facets to the weak form and e^2 D u^2 to the energy.

The outer boundary (top, bottom, side r = R_out) is split into parts that are ``ground``
(Dirichlet 0), ``free`` (zero normal field) or ``far`` (Robin monopole condition
du/dn = -u (n . rho_hat)/rho, rho measured from a centre on the axis, which makes a monopole
far field exact and adds the exterior field energy of that monopole to the form). A top part
may also be ``dielectric``: a grounded gate on a thin charge-free layer (thickness t,
permittivity eps_d), the Robin condition of the series capacitance per area eps_0 eps_d / t
(:func:`qhdesign.fem.forms.series_layer`). The axis r = 0 needs no condition: every form
carries the factor r. ``permittivity_patches`` override the permittivity over rectangles
(r, z) of the tensor mesh, e.g. to mesh such a layer only under a gate.

Capacitance by energy: with u_i the solution for conductor i at 1 V and every other conductor at
0 V, C_ij = a(u_i, u_j), where a is the full symmetric bilinear form (field energy, sheet terms,
Robin term). This is the Galerkin reaction charge, which converges at twice the rate of the
energy-norm error; flux integrals over a conductor converge slowly at the edge singularity
(they were tried and measured worse).

The solve runs in four steps, each a function of this module: :func:`build` (grid, mesh,
spaces, forms, Dirichlet dofs), :func:`assemble` (matrix and its LU factorisation),
:func:`solve` (one potential per conductor) and :func:`extract` (capacitance matrix and checks);
:func:`solve_capacitance` runs them in a row.

Mesh: the engine's tensor mesh (:mod:`qhdesign.fem.tensor_mesh`) of a graded r-node list and a
graded z-level list (:mod:`qhdesign.fem.grid`; fine at every line end and every boundary-kind
change, where the field is singular; coarse far away). Mesh coordinates are nm, (r, y = -z).

References
----------
J. D. Jackson, Classical Electrodynamics, 3rd ed. (Wiley, 1999), sec. 1.11 (energy and
capacitance coefficients) and sec. 3.12 (the charged disk).
"""

from __future__ import annotations

import itertools
import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import constants as sc

from qhdesign.errors import InputError

from .grid import graded_nodes
from .tensor_mesh import NM, TensorModel, TensorNumbering, build_tensor_mesh

__all__ = [
    "AxiLine",
    "AxiMeshOptions",
    "AxiProblem",
    "AxiSystem",
    "CapacitanceSolution",
    "assemble",
    "build",
    "extract",
    "solve",
    "solve_capacitance",
]

#: Boundary facet tags by kind; line i has tag LINE0 + i.
BOUNDARY_TAGS = {"ground": 1, "free": 2, "far": 3, "dielectric": 4}
LINE0 = 100
LINE_KINDS = ("conductor", "ground", "sheet")


@dataclass(frozen=True)
class AxiLine:
    """A horizontal line z = z_m, r_from_m <= r <= r_to_m (a disk if r_from_m = 0, else a ring).

    Attributes
    ----------
    z_m
        Depth (m); must lie strictly inside the domain.
    r_from_m, r_to_m
        Radial extent (m).
    kind
        ``"conductor"``, ``"ground"`` or ``"sheet"``.
    name
        Conductor or sheet name.
    dos_J_m2
        2D density of states of a ``sheet`` (J^-1 m^-2).
    """

    z_m: float
    r_from_m: float
    r_to_m: float
    kind: str
    name: str = ""
    dos_J_m2: float = 0.0


@dataclass(frozen=True)
class AxiProblem:
    """Layers, lines and boundary conditions of an axisymmetric capacitance problem (SI).

    Attributes
    ----------
    layer_z_m
        Layer boundaries, increasing, shape (L+1,); the domain is layer_z_m[0] <= z <= [-1].
    layer_permittivity
        Relative permittivities, shape (L,).
    lines
        Conductors, grounded lines and sheets.
    outer_radius_m
        Domain radius R_out (m).
    top
        Parts of the top boundary: ``((r_from_m, r_to_m, kind), ...)`` covering [0, R_out];
        kind in ``ground``, ``free``, ``far``, ``dielectric`` (a grounded gate on the top
        dielectric below).
    bottom, side
        Kind of the bottom boundary and of the side r = R_out (``ground``, ``free``, ``far``).
    far_centre_z_m
        Depth of the monopole centre of the Robin condition (on the axis).
    top_dielectric_thickness_m, top_dielectric_permittivity
        The layer between a ``dielectric`` top part's metal and the domain (m; relative), lumped
        into the series capacitance per area eps_0 eps_d / t.
    permittivity_patches
        ``((z_from_m, z_to_m, r_from_m, r_to_m, eps), ...)``: relative permittivity ``eps`` on
        the cells inside each rectangle (later patches win); z ends must be layer boundaries.
    """

    layer_z_m: tuple[float, ...]
    layer_permittivity: tuple[float, ...]
    lines: tuple[AxiLine, ...]
    outer_radius_m: float
    top: tuple[tuple[float, float, str], ...]
    bottom: str = "far"
    side: str = "far"
    far_centre_z_m: float = 0.0
    top_dielectric_thickness_m: float = 0.0
    top_dielectric_permittivity: float = 1.0
    permittivity_patches: tuple[tuple[float, float, float, float, float], ...] = ()

    def __post_init__(self):
        z = np.asarray(self.layer_z_m, dtype=float)
        if z.ndim != 1 or z.size < 2 or np.any(np.diff(z) <= 0):
            raise InputError("layer boundaries must increase", key="layer_z_m")
        if len(self.layer_permittivity) != z.size - 1:
            raise InputError("one permittivity per layer", key="layer_permittivity")
        if min(self.layer_permittivity) <= 0:
            raise InputError("permittivities must be > 0", key="layer_permittivity")
        if not self.outer_radius_m > 0:
            raise InputError("outer radius must be > 0", key="outer_radius_m")
        for kind in (self.bottom, self.side):
            if kind not in ("ground", "free", "far"):
                raise InputError(f"boundary kind '{kind}'; allowed: ground, free, far")
        for kind in (p[2] for p in self.top):
            if kind not in BOUNDARY_TAGS:
                raise InputError(
                    f"top boundary kind '{kind}'; allowed: ground, free, far, dielectric"
                )
        if any(p[2] == "dielectric" for p in self.top):
            if not 0.0 < self.top_dielectric_thickness_m < 10e-6:
                raise InputError(
                    "a dielectric top part needs a layer thickness in (0, 10 um)",
                    key="top_dielectric_thickness_m",
                )
            if not self.top_dielectric_permittivity >= 1.0:
                raise InputError(
                    "the top dielectric's relative permittivity must be >= 1",
                    key="top_dielectric_permittivity",
                )
        for patch in self.permittivity_patches:
            z0, z1, r0, r1, e = (float(x) for x in patch)
            on_layers = all(np.any(np.isclose(z, zz, rtol=0, atol=1e-15)) for zz in (z0, z1))
            if not (z0 < z1 and 0.0 <= r0 < r1 <= self.outer_radius_m and e > 0 and on_layers):
                raise InputError(
                    "a permittivity patch needs z_from < z_to on layer boundaries, "
                    "0 <= r_from < r_to <= R_out and eps > 0",
                    key="permittivity_patches",
                )
        ends = sorted((float(a), float(b)) for a, b, _ in self.top)
        if (
            not ends
            or ends[0][0] != 0.0
            or ends[-1][1] != self.outer_radius_m
            or any(b != a2 for (_, b), (a2, _) in itertools.pairwise(ends))
        ):
            raise InputError("top boundary parts must tile [0, R_out]", key="top")
        for ln in self.lines:
            if ln.kind not in LINE_KINDS:
                raise InputError(f"line kind '{ln.kind}'; allowed: {', '.join(LINE_KINDS)}")
            if not (z[0] < ln.z_m < z[-1]):
                raise InputError(f"line '{ln.name}' at z = {ln.z_m:g} m is not inside the domain")
            if not (0.0 <= ln.r_from_m < ln.r_to_m <= self.outer_radius_m):
                raise InputError(f"line '{ln.name}' needs 0 <= r_from < r_to <= R_out")
            if ln.kind == "sheet" and not ln.dos_J_m2 > 0:
                raise InputError(f"sheet '{ln.name}' needs a density of states > 0")
        # lines at different potentials must not touch (the capacitance would diverge)
        for i, a in enumerate(self.lines):
            for b in self.lines[i + 1 :]:
                if abs(a.z_m - b.z_m) < 1e-15 and a.r_from_m <= b.r_to_m and b.r_from_m <= a.r_to_m:
                    same = a.kind == b.kind == "ground" or (
                        a.kind == b.kind == "conductor" and a.name == b.name
                    )
                    if not same:
                        raise InputError(
                            f"lines '{a.name}' and '{b.name}' touch or overlap; "
                            "leave a gap between them"
                        )

    @property
    def conductors(self) -> tuple[str, ...]:
        """Conductor names in order of first appearance."""
        out: list[str] = []
        for ln in self.lines:
            if ln.kind == "conductor" and ln.name not in out:
                out.append(ln.name)
        return tuple(out)


@dataclass(frozen=True)
class AxiMeshOptions:
    """Graded tensor mesh and element (sizes in m; ``refine`` divides every size and the growth).

    Attributes
    ----------
    h_edge_m
        Cell size at every line end and every boundary-kind change (field singularities).
    h_line_m
        z-size at every line (conductors and sheets).
    growth
        Linear growth rate of the size away from those points.
    h_max_m
        Largest cell size.
    degree
        Lagrange degree (1 or 2).
    refine
        Refinement factor (2 halves every cell).
    """

    h_edge_m: float = 0.2e-9
    h_line_m: float = 0.2e-9
    growth: float = 0.5
    h_max_m: float = 400e-9
    degree: int = 2
    refine: float = 1.0

    def __post_init__(self):
        if self.degree not in (1, 2):
            raise InputError("element degree must be 1 or 2", key="degree")
        if not (self.refine > 0 and self.h_edge_m > 0 and self.h_line_m > 0 and self.growth > 0):
            raise InputError("mesh sizes, growth and refine must be > 0")


@dataclass(frozen=True, eq=False)
class CapacitanceSolution:
    """Maxwell capacitance matrix and the solver record.

    Attributes
    ----------
    names
        Conductor names, shape (N,).
    matrix_F
        Maxwell capacitance matrix (F), shape (N, N); Q_i = sum_j C_ij V_j.
    r_m, z_m
        Grid nodes (m), shapes (nr,), (nz,).
    potentials
        u_i on the grid nodes, shape (N, nz, nr) (only if requested, else None).
    info
        dofs, cells, degree, timings (s).
    """

    names: tuple[str, ...]
    matrix_F: np.ndarray
    r_m: np.ndarray
    z_m: np.ndarray
    potentials: np.ndarray | None = None
    info: dict = field(default_factory=dict)


# ---------------------------------------------------------------------------- grid
def build_axi_grid(problem: AxiProblem, opts: AxiMeshOptions) -> tuple[np.ndarray, np.ndarray]:
    """Graded r-nodes and z-levels (m) containing every line end, line and layer boundary."""
    f = float(opts.refine)
    h_edge, h_line = opts.h_edge_m / f, opts.h_line_m / f
    growth, h_max = opts.growth / f, opts.h_max_m / f
    R = problem.outer_radius_m
    r_breaks = {0.0, R}
    for ln in problem.lines:
        r_breaks |= {ln.r_from_m, ln.r_to_m}
    for a, b, _ in problem.top:
        r_breaks |= {float(a), float(b)}
    for patch in problem.permittivity_patches:
        r_breaks |= {float(patch[2]), float(patch[3])}
    # singular points: line ends away from the axis and the outer edge, boundary-kind changes
    r_attr = sorted(r for r in r_breaks if 0.0 < r < R)
    r = graded_nodes(
        sorted(r_breaks),
        [(x, h_edge) for x in r_attr],
        growth,
        h_max,
        min_cells=2,
        geometric_samples=True,
    )
    zl = np.asarray(problem.layer_z_m, dtype=float)
    line_z = sorted({ln.z_m for ln in problem.lines})
    z_breaks = sorted(set(zl.tolist()) | set(line_z))
    z_attr = [(zz, h_line) for zz in line_z]
    if any(k != "far" for _, _, k in problem.top):  # a gate edge or surface on top
        z_attr.append((float(zl[0]), h_edge))
    z_attr += [(float(zz), 4 * h_line) for zz in zl[1:-1]]
    z = graded_nodes(z_breaks, z_attr, growth, h_max, min_cells=2, geometric_samples=True)
    for zz in line_z:  # exact line depths (graded_nodes keeps breakpoints; remove fp noise)
        z[int(np.argmin(np.abs(z - zz)))] = zz
    return r, z


def _facet_groups(problem: AxiProblem, r_m: np.ndarray, z_m: np.ndarray) -> list:
    """Facet groups of the tensor mesh: boundary parts by kind, then line i as LINE0 + i."""
    num = TensorNumbering(r_m.size, z_m.size)
    nz = z_m.size
    rc = 0.5 * (r_m[1:] + r_m[:-1])

    def row(k: int, r0: float, r1: float) -> np.ndarray:
        return num.row(k, (rc > r0) & (rc < r1))

    curves: dict[int, list[np.ndarray]] = {}
    for a0, b0, kind in problem.top:
        curves.setdefault(BOUNDARY_TAGS[kind], []).append(row(0, a0, b0))
    curves.setdefault(BOUNDARY_TAGS[problem.bottom], []).append(row(nz - 1, 0.0, r_m[-1]))
    curves.setdefault(BOUNDARY_TAGS[problem.side], []).append(num.column(r_m.size - 1))
    for i, ln in enumerate(problem.lines):
        k = int(np.argmin(np.abs(z_m - ln.z_m)))
        curves[LINE0 + i] = [row(k, ln.r_from_m, ln.r_to_m)]
    return [(tag, f"group{tag}", np.concatenate(parts)) for tag, parts in sorted(curves.items())]


def _layer_of_interval(problem: AxiProblem, z_m: np.ndarray) -> np.ndarray:
    zl = np.asarray(problem.layer_z_m, dtype=float)
    mid = 0.5 * (z_m[1:] + z_m[:-1])
    return np.clip(np.searchsorted(zl, mid) - 1, 0, zl.size - 2)


# ---------------------------------------------------------------------------- solve
@dataclass(eq=False)
class AxiSystem:
    """The built finite-element system of an :class:`AxiProblem` (step 1, :func:`build`).

    Holds the grid (``r_m``, ``z_m``), the DOLFINx mesh and space ``V``, the bilinear form
    ``energy(u, v)`` (in units of eps_0 nm; C = 2 pi eps_0 nm a), the compiled forms, the
    Dirichlet condition (``bc`` on the function ``g``) and the dofs of every conductor.
    """

    problem: AxiProblem
    options: AxiMeshOptions
    comm: Any
    names: tuple[str, ...]
    r_m: np.ndarray
    z_m: np.ndarray
    mesh: Any
    V: Any
    energy: Any
    a_form: Any
    L_form: Any
    bc: Any
    g: Any
    cond_dofs: list
    timings: dict = field(default_factory=dict)


def build(problem: AxiProblem, mesh_options: AxiMeshOptions | None = None, *, comm=None):
    """Step 1: grid, mesh, function space, forms and Dirichlet dofs of ``problem``."""
    from .backend import load

    MPI, _dolfinx = load()
    import ufl
    from dolfinx import default_scalar_type, fem

    from . import forms

    opts = mesh_options or AxiMeshOptions()
    comm = comm if comm is not None else MPI.COMM_WORLD
    names = problem.conductors
    if not names:
        raise InputError("the problem has no conductor")
    timings: dict[str, float] = {}
    t0 = time.perf_counter()
    r_m, z_m = build_axi_grid(problem, opts)
    model = None
    if comm.rank == 0:
        model = TensorModel(
            "qhdesign_axisymmetric",
            r_m,
            z_m,
            _layer_of_interval(problem, z_m),
            len(problem.layer_permittivity),
            _facet_groups(problem, r_m, z_m),
        )
    data = build_tensor_mesh(model, comm)
    msh, ct, ft = data.mesh, data.cell_tags, data.facet_tags
    timings["mesh_s"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    V = fem.functionspace(msh, ("Lagrange", opts.degree))
    Q = fem.functionspace(msh, ("DG", 0))
    eps = fem.Function(Q)
    eps.x.array[ct.indices] = np.asarray(problem.layer_permittivity, dtype=float)[ct.values - 1]
    if problem.permittivity_patches:
        from dolfinx.mesh import compute_midpoints

        tdim = msh.topology.dim
        mid = compute_midpoints(msh, tdim, ct.indices) * NM  # (r, -z) in m
        for z0, z1, r0, r1, e in problem.permittivity_patches:
            inside = (mid[:, 0] > r0) & (mid[:, 0] < r1) & (-mid[:, 1] > z0) & (-mid[:, 1] < z1)
            eps.x.array[ct.indices[inside]] = float(e)
    eps.x.scatter_forward()

    r = ufl.SpatialCoordinate(msh)[0]
    centre = (0.0, -problem.far_centre_z_m / NM)
    dx = ufl.Measure("dx", domain=msh)
    ds = ufl.Measure("ds", domain=msh, subdomain_data=ft)
    dS = ufl.Measure("dS", domain=msh, subdomain_data=ft)

    c_top = None
    if any(p[2] == "dielectric" for p in problem.top):
        c_top = fem.Constant(
            msh,
            default_scalar_type(
                problem.top_dielectric_permittivity / (problem.top_dielectric_thickness_m / NM)
            ),
        )

    def energy(u, v):
        """The bilinear form in units of eps_0 * nm (times 2 pi): C = 2 pi eps_0 nm * a."""
        a = forms.dielectric(u, v, eps, dx, r=r)
        a += forms.far_field_robin(u, v, eps, ds(BOUNDARY_TAGS["far"]), centre, r=r)
        if c_top is not None:  # grounded gates on the top dielectric (units of eps_0 / nm)
            a += forms.series_layer(u, v, c_top, ds(BOUNDARY_TAGS["dielectric"]), r=r)
        for i, ln in enumerate(problem.lines):
            if ln.kind == "sheet":
                # linear Thomas–Fermi sheet: e^2 D / eps_0 in nm^-1 (the quantum capacitance)
                q = default_scalar_type(sc.e**2 * ln.dos_J_m2 / sc.epsilon_0 * NM)
                density = forms.linear_sheet_density(fem.Constant(msh, q), u("+"))
                a += forms.sheet(density, v, dS(LINE0 + i), r=r)
        return a

    u_t, v_t = ufl.TrialFunction(V), ufl.TestFunction(V)
    a_form = fem.form(energy(u_t, v_t))
    L_form = fem.form(fem.Constant(msh, default_scalar_type(0.0)) * v_t * r * dx)

    def dofs_of(tags) -> np.ndarray:
        found = [fem.locate_dofs_topological(V, 1, ft.find(t)) for t in tags]
        return np.unique(np.concatenate(found)).astype(np.int32)

    ground_tags = [BOUNDARY_TAGS["ground"]] + [
        LINE0 + i for i, ln in enumerate(problem.lines) if ln.kind == "ground"
    ]
    cond_dofs = [
        dofs_of([LINE0 + i for i, ln in enumerate(problem.lines) if ln.name == nm_])
        for nm_ in names
    ]
    all_dofs = np.unique(np.concatenate([dofs_of(ground_tags), *cond_dofs])).astype(np.int32)
    g = fem.Function(V)
    bc = fem.dirichletbc(g, all_dofs)
    timings["forms_s"] = time.perf_counter() - t0
    return AxiSystem(
        problem,
        opts,
        comm,
        tuple(names),
        r_m,
        z_m,
        msh,
        V,
        energy,
        a_form,
        L_form,
        bc,
        g,
        cond_dofs,
        timings,
    )


def assemble(system: AxiSystem):
    """Step 2: the matrix with the Dirichlet rows and its LU factorisation (a PETSc KSP).

    One factorisation serves every conductor: the Dirichlet dofs are the same for all
    right-hand sides, only their values change. The caller destroys the KSP (``ksp.destroy()``;
    :func:`solve_capacitance` does).
    """
    from dolfinx.fem import petsc as fpetsc

    from .petsc import LU_MUMPS, linear_solver, options_prefix

    t0 = time.perf_counter()
    A = fpetsc.assemble_matrix(system.a_form, bcs=[system.bc])
    A.assemble()
    ksp = linear_solver(system.comm, A, LU_MUMPS, options_prefix("capacitance"))
    system.timings["assemble_s"] = time.perf_counter() - t0
    return ksp


def solve(system: AxiSystem, ksp) -> list:
    """Step 3: u_i for conductor i at 1 V and every other conductor at 0 V (DOLFINx Functions)."""
    from dolfinx import fem
    from dolfinx.fem import petsc as fpetsc
    from petsc4py import PETSc

    t0 = time.perf_counter()
    sols = []
    g, bc = system.g, system.bc
    for dofs in system.cond_dofs:
        g.x.array[:] = 0.0
        g.x.array[dofs] = 1.0
        b = fpetsc.assemble_vector(system.L_form)
        fpetsc.apply_lifting(b, [system.a_form], bcs=[[bc]])
        b.ghostUpdate(addv=PETSc.InsertMode.ADD, mode=PETSc.ScatterMode.REVERSE)
        fpetsc.set_bc(b, [bc])
        u = fem.Function(system.V)
        ksp.solve(b, u.x.petsc_vec)
        if ksp.getConvergedReason() <= 0:  # pragma: no cover - LU does not fail quietly
            from qhdesign.errors import ConvergenceError

            raise ConvergenceError("axisymmetric capacitance LU", 1, [], "", reason="MUMPS")
        u.x.scatter_forward()
        sols.append(u)
        b.destroy()
    system.timings["solve_s"] = time.perf_counter() - t0
    return sols


def extract(system: AxiSystem, sols: list, *, keep_potentials: bool = False):
    """Step 4: the Maxwell matrix C_ij = a(u_i, u_j) (F), the reciprocity check, the record."""
    from dolfinx import fem
    from mpi4py import MPI

    t0 = time.perf_counter()
    comm, V = system.comm, system.V
    ua, ub = fem.Function(V), fem.Function(V)
    c_form = fem.form(system.energy(ua, ub))
    N = len(system.names)
    C = np.zeros((N, N))
    scale = 2.0 * np.pi * sc.epsilon_0 * NM  # F per unit of the nm-form
    for i in range(N):
        for j in range(i, N):
            ua.x.array[:] = sols[i].x.array
            ub.x.array[:] = sols[j].x.array
            val = comm.allreduce(fem.assemble_scalar(c_form), op=MPI.SUM)
            C[i, j] = C[j, i] = scale * val
    # Reaction charges Q_ij = a(u_i, w_j), w_j = 1 on the dofs of conductor j and 0 elsewhere:
    # equal to C_ij when the solves are exact, so R - R^T (reciprocity) and R - C check them.
    R = np.zeros((N, N))
    for i in range(N):
        ua.x.array[:] = sols[i].x.array
        for j in range(N):
            ub.x.array[:] = 0.0
            ub.x.array[system.cond_dofs[j]] = 1.0
            R[i, j] = scale * comm.allreduce(fem.assemble_scalar(c_form), op=MPI.SUM)
    diag = np.sqrt(np.outer(np.diag(C), np.diag(C)))
    reciprocity = float(np.max(np.abs(R - R.T) / diag))
    reaction_vs_energy = float(np.max(np.abs(R - C) / diag))
    system.timings["energy_s"] = time.perf_counter() - t0
    r_m, z_m = system.r_m, system.z_m
    pots = None
    if keep_potentials:
        pots = np.stack([_on_grid(u, V, r_m, z_m, comm) for u in sols])
    timings = {k: system.timings[k] for k in ("mesh_s", "assemble_s", "solve_s", "energy_s")}
    timings["assemble_s"] += system.timings.get("forms_s", 0.0)
    info = {
        "dofs": int(V.dofmap.index_map.size_global),
        "cells": int(system.mesh.topology.index_map(2).size_global),
        "grid_nodes_r": int(r_m.size),
        "grid_levels_z": int(z_m.size),
        "element_degree": int(system.options.degree),
        "smallest_cell_m": float(min(np.diff(r_m).min(), np.diff(z_m).min())),
        "ranks": int(comm.size),
        "linear_solver": "LU (MUMPS)",
        "reciprocity_error": reciprocity,
        "reaction_vs_energy": reaction_vs_energy,
        "timings_s": timings,
    }
    return CapacitanceSolution(tuple(system.names), C, r_m, z_m, pots, info)


def solve_capacitance(
    problem: AxiProblem,
    mesh_options: AxiMeshOptions | None = None,
    *,
    comm=None,
    keep_potentials: bool = False,
) -> CapacitanceSolution:
    """Maxwell capacitance matrix of the conductors of ``problem`` (F): build, assemble, solve,
    extract.

    Parameters
    ----------
    problem
        Geometry, materials and boundary conditions.
    mesh_options
        Mesh and element (defaults: :class:`AxiMeshOptions`).
    comm
        MPI communicator (default ``MPI.COMM_WORLD``); the result is the same on every rank.
    keep_potentials
        Also return u_i on the grid nodes (for plots), shape (N, nz, nr).

    Returns
    -------
    CapacitanceSolution
    """
    system = build(problem, mesh_options, comm=comm)
    ksp = assemble(system)
    try:
        sols = solve(system, ksp)
    finally:
        A = ksp.getOperators()[0]
        ksp.destroy()
        A.destroy()
    return extract(system, sols, keep_potentials=keep_potentials)


def _on_grid(u, V, r_m, z_m, comm) -> np.ndarray:
    """Nodal values of u on the tensor grid, gathered on every rank, shape (nz, nr)."""
    coords = V.tabulate_dof_coordinates()
    n_own = V.dofmap.index_map.size_local
    rr = coords[:n_own, 0] * NM
    zz = -coords[:n_own, 1] * NM
    ir = np.searchsorted(r_m, rr - 1e-6 * NM)
    iz = np.searchsorted(z_m, zz - 1e-6 * NM)
    ok = (
        (ir < r_m.size)
        & (iz < z_m.size)
        & np.isclose(r_m[np.minimum(ir, r_m.size - 1)], rr, rtol=0, atol=1e-6 * NM)
        & np.isclose(z_m[np.minimum(iz, z_m.size - 1)], zz, rtol=0, atol=1e-6 * NM)
    )
    parts = comm.allgather((iz[ok], ir[ok], u.x.array[:n_own][ok].copy()))
    out = np.full((z_m.size, r_m.size), np.nan)
    for a, b, v in parts:
        out[a, b] = v
    return out
