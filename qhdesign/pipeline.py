"""Stack -> bands -> sheet model -> FEM stages: the one place that joins them.

The 1D stage (:mod:`qhdesign.sp1d`) reduces a :class:`~qhdesign.stack.Stack` to a
:class:`~qhdesign.sheets.SheetModel`; the FEM stages (:mod:`qhdesign.section`,
:mod:`qhdesign.island`) are built from that sheet model alone and import neither the stack nor
the 1D stage. This module runs the chain for a stack and refuses what a FEM stage does not model
(a gate dielectric in the legacy conductor island) with an error that names the stack file and key.

Functions
---------
:func:`sheet_model_from_stack`
    Stack -> 1D solve at zero bias -> sheet model.
:func:`section_from_stack`
    Stack -> cross-section of the 2D stage.
:func:`island_column_from_stack`
    Stack -> layer column of the island stage.
:func:`solve_island`
    The island stage for a stack, a sheet model or a column.
:func:`solve_island_operating`
    The island at its operating point for a stack (with the disorder estimate's lifetimes) or a
    cross-section.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from qhdesign.errors import InputError

__all__ = [
    "GATE_BARRIER_RANGE_J",
    "check_sheet_xc_choice",
    "exposed_surface_model",
    "island_column_from_stack",
    "refuse_gate_dielectric",
    "section_from_stack",
    "sheet_model_from_stack",
    "solve_island",
    "solve_island_operating",
]


def refuse_gate_dielectric(stack, stage: str) -> None:
    """The island model puts gate metal directly on the semiconductor: refuse a stack with a
    gate dielectric there (one-line InputError naming the key)."""
    if float(getattr(stack.surface, "dielectric_thickness", 0.0) or 0.0) > 0.0:
        raise InputError(
            f"{stage} puts gate metal directly on the semiconductor; a gate dielectric is "
            "not modelled yet (allowed: surface.dielectric_thickness = 0)",
            source=str(getattr(stack, "source", "") or "stack"),
            key="surface.dielectric_thickness",
        )


def sheet_model_from_stack(stack, *, stage: str = "the 2D stage", gate_dielectric: bool = True):
    """Run the 1D stage on ``stack`` at zero bias and reduce it to a sheet model.

    ``gate_dielectric=False``: refuse a stack with a gate dielectric (a stage that does not model
    it); the 2D cross-section does (the sheet model carries the layer).

    Raises
    ------
    InputError
        A gate dielectric where the stage does not model it, or an invalid stack.
    ConvergenceError
        If the 1D solve does not converge.
    """
    if not gate_dielectric:
        refuse_gate_dielectric(stack, stage)
    return _bands_to_sheets(stack)


def _bands_to_sheets(stack):
    from qhdesign.sp1d import solve_bands
    from qhdesign.sp1d.sheets import sheet_model

    return sheet_model(stack, solve_bands(stack))


#: Schottky barriers of a gate metal the 2D stage accepts (J): above 0, below 3 eV.
GATE_BARRIER_RANGE_J = (0.0, 3.0 * 1.602176634e-19)
SURFACE_MODELS = ("frozen", "pinned")

#: Sheet models of the FEM stages: the closed-form Thomas–Fermi sheet with the 1D stage's
#: density of states and frozen tails, or laws tabulated from gated 1D solves (tails deplete
#: with their well; docs/models.md, "Sheets that follow the gate").
SHEET_MODELS = ("1d-tables", "constant-dos")
DEFAULT_SHEET_MODEL = "1d-tables"
#: Gate-voltage step (V) and lowest voltage of the tabulating 1D solves.
TABLE_STEP_V = 0.01
TABLE_LOWEST_V = -4.0
#: The sweep starts at this gate voltage (V).
TABLE_HIGHEST_V = 0.0
#: Largest departure from monotone (fraction of the well's largest density) a table may have
#: in its sheet potential; smaller departures are smoothed by isotonic regression.
TABLE_MONOTONE_TOL = 0.005
#: A law ends at the first knot within this fraction of the well's largest tabulated density.
TABLE_TOP_FRACTION = 0.01
#: A well whose table centroid moves by more than this (m) puts its charge at the moving
#: centroid (split between two levels); below it the charge stays on one level.
CENTROID_SPAN_MIN_M = 0.05e-9

_TABLE_CACHE: dict = {}
_LAST_TABLE_INFO: dict = {}


def exposed_surface_model(stack, section=None, requested: str | None = None) -> str:
    """The exposed-surface model of a 2D solve of ``stack``.

    ``requested`` (``"frozen"`` or ``"pinned"``) or, by default, the section's own (frozen for
    an exposed surface with frozen charge). A stack with a global top gate has no exposed
    surface: its metal is a Dirichlet surface, so the model is always ``"pinned"``. Errors are
    keyed ``surface`` (the argument name).
    """
    if requested is not None and requested not in SURFACE_MODELS:
        raise InputError(
            f"'{requested}' is not a surface model; allowed: {', '.join(SURFACE_MODELS)}",
            key="surface",
        )
    if stack.surface.kind != "exposed":
        return "pinned"
    if requested is not None:
        return requested
    return section.surface_mode if section is not None else "frozen"


def section_from_stack(
    stack,
    *,
    gate_barrier_J: float | None = None,
    sheets: str = DEFAULT_SHEET_MODEL,
    sheet_xc: str = "none",
    compressibility_floor: float | None = None,
):
    """Run the 1D stage on a stack and build the cross-section (donors frozen at their 1D state).

    ``sheets="constant-dos"``: the same as
    ``cross_section_from_sheet_model(sheet_model_from_stack(stack))`` (closed-form sheets, tails
    frozen); ``"1d-tables"``: every sheet follows its table from gated 1D solves
    (:func:`tabulated_section`). A gate barrier outside 0 to 3 eV is refused (key
    ``gate_barrier_J``) before the 1D solve, an unknown sheet model (key ``sheets``) too.

    ``sheet_xc`` (:data:`qhdesign.sheetxc.SHEET_XC_MODELS`) adds each constant-DOS sheet's own
    in-plane exchange (``"exchange"``) or exchange and correlation (``"exchange+correlation"``)
    to its mu(n) (:func:`qhdesign.sheetxc.with_sheet_xc`), with dmu/dn floored at
    ``compressibility_floor`` times pi hbar^2/m* (default
    :data:`qhdesign.sheetxc.DEFAULT_COMPRESSIBILITY_FLOOR`). It needs ``sheets="constant-dos"``:
    1D-table sheets carry the 1D stage's own exchange-correlation (``models.exchange_correlation``)
    and are refused with it (key ``sheet_xc``), before the 1D solve.
    """
    from qhdesign.section.model import cross_section_from_sheet_model
    from qhdesign.sheetxc import with_sheet_xc
    from qhdesign.sp1d import solve_bands
    from qhdesign.sp1d.sheets import sheet_model

    check_sheet_model(sheets)
    floor = check_sheet_xc_choice(sheets, sheet_xc, compressibility_floor)

    lo, hi = GATE_BARRIER_RANGE_J
    if gate_barrier_J is not None and not lo < gate_barrier_J < hi:
        raise InputError(
            f"gate barrier {gate_barrier_J / 1.602176634e-19:.4g} eV is out of range; allowed "
            f"between {lo / 1.602176634e-19:g} and {hi / 1.602176634e-19:g} eV",
            key="gate_barrier_J",
        )

    bands = solve_bands(stack)
    section = cross_section_from_sheet_model(
        sheet_model(stack, bands), gate_barrier_J=gate_barrier_J
    )
    if sheets == "1d-tables":
        section = tabulated_section(section, stack, bands)
    return with_sheet_xc(section, sheet_xc, compressibility_floor=floor)


def check_sheet_xc_choice(
    sheets: str, sheet_xc: str, compressibility_floor: float | None = None
) -> float:
    """Check the sheets' own exchange-correlation against the sheet model (before any solve);
    returns the floor to use. Errors are keyed ``sheet_xc`` / ``compressibility_floor``."""
    from qhdesign.sheetxc import DEFAULT_COMPRESSIBILITY_FLOOR, check_sheet_xc

    floor = (
        DEFAULT_COMPRESSIBILITY_FLOOR if compressibility_floor is None else compressibility_floor
    )
    check_sheet_xc(sheet_xc, floor)
    if sheet_xc != "none" and sheets != "constant-dos":
        raise InputError(
            f"the sheets' own exchange-correlation '{sheet_xc}' is a constant-DOS sheet model "
            "(sheets constant-dos); 1D-table sheets take theirs from the 1D stage "
            "(models.exchange_correlation)",
            key="sheet_xc",
        )
    return floor


def check_sheet_model(sheets: str) -> str:
    """The sheet-model name, or a one-line InputError keyed ``sheets``."""
    if sheets not in SHEET_MODELS:
        raise InputError(
            f"'{sheets}' is not a sheet model; allowed: {', '.join(SHEET_MODELS)}", key="sheets"
        )
    return sheets


def stack_tables(stack, *, step_V: float = TABLE_STEP_V):
    """Sheet tables of a stack (:func:`qhdesign.sp1d.sheet_tables.sheet_tables`), from 0 V down
    until every well is empty (at most to :data:`TABLE_LOWEST_V` or the stack's gate limit),
    cached in this process by the stack's content and the step."""
    import time

    from qhdesign.limits import MIN_GATE_VOLTAGE_V
    from qhdesign.sp1d.sheet_tables import sheet_tables

    key = (_stack_key(stack), float(step_V))
    if key not in _TABLE_CACHE:
        lowest = max(TABLE_LOWEST_V, MIN_GATE_VOLTAGE_V)
        _TABLE_CACHE.clear()  # one stack at a time: tables are small but sweeps vary the stack
        t0 = time.perf_counter()
        tab = sheet_tables(stack, TABLE_HIGHEST_V, lowest, step_V)
        _LAST_TABLE_INFO.update(
            step_V=float(step_V),
            solves=int(tab.gate_voltage_V.size),
            build_s=time.perf_counter() - t0,
        )
        _TABLE_CACHE[key] = tab
    return _TABLE_CACHE[key]


def _stack_key(stack) -> str:
    import hashlib
    import pickle

    try:
        return hashlib.sha256(pickle.dumps(stack)).hexdigest()
    except Exception:  # an unpicklable stack (a test double): no caching
        return f"id-{id(stack)}"


def tabulated_section(section, stack, bands, *, step_V: float = TABLE_STEP_V):
    """Replace every sheet of ``section`` (built from ``bands``) by a law from 1D gated solves.

    Each sheet carries the electrons of its well's own subbands, tails in the barriers included,
    and reports those inside its layer; the frozen residual keeps only the electrons of no well
    (classical electrons, subbands of doping layers). The law of a well is its electrons against
    the potential its sheet has in the column of each gated 1D solve rebuilt the way the FEM
    stages hold it (sheets at their depths with the solve's electrons, the frozen charge, the
    solve's own surface potential): the far field under a gate then reproduces the 1D gated
    solves (docs/models.md, "Sheets that follow the gate")."""
    from dataclasses import replace

    from qhdesign.sheetlaw import SheetLaw
    from qhdesign.sp1d.sheets import owned_subband_charge

    tables = stack_tables(stack, step_V=step_V)
    owned, residual = owned_subband_charge(bands)
    rho = np.asarray(section.charge_C_m3, dtype=float)
    if residual is not None and rho.size == residual.size:
        base = _residual_of(section, bands)
        rho = rho - (0.0 if base is None else base) + residual
    section = replace(
        section,
        sheets=tuple(replace(s, charge_density_m2=owned[s.name]) for s in section.sheets),
        charge_C_m3=rho,
    )
    # every sheet reads the potential at its well's upper interface and puts its charge at its
    # centroid, which moves with the density between the shallowest and the deepest centroid
    # of the table (docs/models.md, "Sheets that follow the gate")
    tops = {str(w.name): float(w.z_top_m) for w in bands.wells}
    moved = []
    for k, s in enumerate(section.sheets):
        if s.name not in tops or not tops[s.name] < s.z_m:
            moved.append(s)
            continue
        n_k = tables.electrons_m2[:, k]
        full = n_k > 1e-3 * max(float(n_k.max()), 1.0)
        c = tables.centroids_m[full, k] if np.any(full) else np.array([s.z_m])
        c_lo, c_hi = float(c.min()), float(c.max())
        deep = c_hi if c_hi - c_lo > CENTROID_SPAN_MIN_M else None
        moved.append(
            replace(
                s,
                z_m=c_lo if deep is not None else s.z_m,
                read_z_m=tops[s.name],
                charge_z_max_m=deep,
            )
        )
    section = replace(section, sheets=tuple(moved))
    phi_col = _column_potentials(section, tables)
    sheets = []
    fallback: dict[str, str] = {}
    for k, s in enumerate(section.sheets):
        order = np.argsort(phi_col[:, k], kind="stable")
        x = phi_col[order, k]
        n = tables.electrons_m2[order, k]
        layer = tables.layer_electrons_m2[order, k]
        cen = np.clip(tables.centroids_m[order, k], s.z_m, s.charge_z_max_m or s.z_m)
        keep = np.concatenate(([True], np.diff(x) > 0))  # drop repeated knots of an empty well
        x, n, layer, cen = x[keep], np.maximum(n[keep], 0.0), layer[keep], cen[keep]
        closed = replace(
            s,
            density_m2=s.far_charge_m2,
            charge_density_m2=None,
            read_z_m=None,
            charge_z_max_m=None,
        )
        if x.size < 2 or not n.max() > 0:
            # a well that holds no electrons anywhere in the sweep keeps the closed form
            sheets.append(closed)
            continue
        mono = _isotonic(n)
        worst = float(np.max(np.abs(mono - n))) / max(float(n.max()), 1.0)
        if worst > TABLE_MONOTONE_TOL:
            # no law for this well: it keeps the closed-form sheet (with its subbands' electrons,
            # tails included, as its far-field charge), and the report says so
            fallback[s.name] = (
                f"its 1D table is not monotone in its sheet potential (off by {worst:.2%} of its "
                f"largest density; allowed {TABLE_MONOTONE_TOL:.1%}): closed-form sheet"
            )
            sheets.append(closed)
            continue
        n = mono
        top = int(np.argmax(n >= n[-1]))  # a flat run at the top keeps its first knot only
        x, n, layer, cen = x[: top + 1], n[: top + 1], layer[: top + 1], cen[: top + 1]
        x, n, layer = _law_top(x, n, layer)
        cen = np.append(cen, [cen[-1]] * (x.size - cen.size))
        law = SheetLaw(
            x,
            n,
            absolute=True,
            label="1D table",
            reported_m2=np.maximum(layer, 0.0),
            centroid_m=cen if s.charge_z_max_m is not None else None,
        )
        # the density the sheet reports in the far field is its law's own there (it differs
        # from the 1D stage's per-layer density by the tail ratio's interpolation, 5e-5 on
        # QL-2417); edge levels and tails are measured against it
        reported_far = s.density_m2
        if s.far_charge_m2 > law.density_m2[0] + 1e-6 * max(float(law.density_m2[-1]), 1.0):
            try:
                reported_far = float(law.reported(law.inverse(s.far_charge_m2)))
            except InputError as err:  # the law ends flat below the far-field charge
                fallback[s.name] = f"{err.args[0] if err.args else err}: closed-form sheet"
                sheets.append(closed)
                continue
        sheets.append(replace(s, law=law, density_m2=reported_far))
    _LAST_TABLE_INFO["fallback"] = dict(fallback)
    return replace(section, sheets=tuple(sheets))


def sheet_model_info(section) -> dict:
    """What the sheets of ``section`` are, for a JSON report: the model name and, per law sheet,
    its label, depth and knot count; for 1D tables the step and the cost of the last build."""
    laws = [s for s in section.sheets if getattr(s, "law", None) is not None]
    if not laws:
        return {"model": "constant-dos"}
    labels = sorted({s.law.label for s in laws})
    out = {
        "model": "1d-tables" if labels == ["1D table"] else "+".join(labels),
        "wells": {
            s.name: {
                "law": s.law.label,
                "sheet_depth_m": float(s.z_m),
                "knots": int(s.law.x_V.size),
                "far_charge_m2": float(s.far_charge_m2),
            }
            for s in laws
        },
    }
    if _LAST_TABLE_INFO.get("fallback"):
        out["closed_form_wells"] = dict(_LAST_TABLE_INFO["fallback"])
    if "1D table" in labels:
        out["table_step_V"] = _LAST_TABLE_INFO.get("step_V")
        out["table_solves"] = _LAST_TABLE_INFO.get("solves")
        out["table_build_s"] = _LAST_TABLE_INFO.get("build_s")
    return out


def _law_top(x, n, layer):
    """Continue a law above its table with the slope the well has while it empties.

    The top of a table can be nearly flat: a well screened from the gate by a filled well above
    it keeps its density while the gate empties the wells above (QL-2417's lower screening well
    changes by 1e-3 over 0.5 V), and the isotonic fit pools that stretch. Its slope there says
    nothing about how the well screens beside a gate, where the law is read around the far-field
    state just above the table. If the law's end slope is below a tenth of the table's secant
    slope between 90 % and 99 % of its largest density (the well emptying itself), one knot
    1 mV above the top continues the law with that secant slope (the end slope is the monotone
    cubic's own, which is zero where the last two segments disagree in steepness).
    """
    if n.size < 3 or not n[-1] > 0:
        return x, n, layer
    i90 = int(np.argmax(n >= 0.90 * n[-1]))
    i99 = int(np.argmax(n >= 0.99 * n[-1]))
    if i99 <= i90:
        i90 = max(i99 - 1, 0)
    if i99 == i90 or not x[i99] > x[i90]:
        return x, n, layer
    from scipy.interpolate import PchipInterpolator

    s_c = (n[i99] - n[i90]) / (x[i99] - x[i90])
    end = float(PchipInterpolator(x, n).derivative()(x[-1]))  # the law's own end slope
    if not s_c > 0 or end >= 0.1 * s_c:
        return x, n, layer
    ratio = layer[-1] / n[-1]
    x2 = np.append(x, x[-1] + 1e-3)
    n2 = np.append(n, n[-1] + s_c * 1e-3)
    return x2, n2, np.append(layer, ratio * n2[-1])


def _read_z(sheet) -> float:
    return sheet.z_m if sheet.read_z_m is None else float(sheet.read_z_m)


def _column_levels(section):
    z_sheet = np.array([s.z_m for s in section.sheets] + [_read_z(s) for s in section.sheets])
    edges = np.asarray(section.charge_edges_m, dtype=float)
    layer_z = np.asarray(section.layer_z_m, dtype=float)
    levels = np.unique(np.concatenate((edges, z_sheet, layer_z)))
    levels = levels[(levels >= layer_z[0]) & (levels <= layer_z[-1])]
    mid = 0.5 * (levels[1:] + levels[:-1])
    layer = np.clip(np.searchsorted(layer_z, mid) - 1, 0, layer_z.size - 2)
    eps = np.asarray(section.layer_permittivity, dtype=float)[layer]
    return levels, eps


def _isotonic(y: np.ndarray) -> np.ndarray:
    """The non-decreasing sequence closest to ``y`` in least squares (pool adjacent violators;
    Barlow, Bartholomew, Bremner, Brunk, Statistical Inference under Order Restrictions, 1972)."""
    vals: list[float] = []
    counts: list[int] = []
    for v in np.asarray(y, dtype=float):
        vals.append(float(v))
        counts.append(1)
        while len(vals) > 1 and vals[-2] > vals[-1]:
            c = counts[-2] + counts[-1]
            vals[-2] = (vals[-2] * counts[-2] + vals[-1] * counts[-1]) / c
            counts[-2] = c
            vals.pop()
            counts.pop()
    return np.repeat(vals, counts)


def _column_potentials(section, tables) -> np.ndarray:
    """phi (V) at every sheet depth in the column of each tabulated 1D solve, rebuilt as the FEM
    stages hold it: sheets with the solve's electrons, the section's frozen charge lumped on the
    1D nodes, phi at the surface from the solve, the section's bottom. Shape (M, W)."""
    from qhdesign.section.model import lump_volume_charge, solve_column

    z_sheet = np.array([s.z_m for s in section.sheets])
    edges = np.asarray(section.charge_edges_m, dtype=float)
    levels, eps = _column_levels(section)
    q_fixed = lump_volume_charge(
        levels,
        section.charge_z_m,
        section.charge_C_m3,
        float(levels[0]),
        float(levels[-1]),
        edges if edges.size else None,
    )
    at = np.array([int(np.argmin(np.abs(levels - z))) for z in z_sheet])
    read = np.array([int(np.argmin(np.abs(levels - _read_z(s)))) for s in section.sheets])
    out = np.zeros((tables.gate_voltage_V.size, z_sheet.size))
    from scipy import constants as sc

    for m in range(tables.gate_voltage_V.size):
        q = q_fixed.copy()
        for k, s in enumerate(section.sheets):
            charge = -sc.e * tables.electrons_m2[m, k]
            if s.charge_z_max_m is None:
                q[at[k]] += charge
                continue
            # the charge at its centroid, split between the neighbouring levels (first moment)
            c = float(np.clip(tables.centroids_m[m, k], s.z_m, s.charge_z_max_m))
            j = int(np.clip(np.searchsorted(levels, c) - 1, 0, levels.size - 2))
            w = (c - levels[j]) / (levels[j + 1] - levels[j])
            q[j] += charge * (1.0 - w)
            q[j + 1] += charge * w
        phi = solve_column(
            levels,
            eps,
            q,
            top="dirichlet",
            top_potential_V=float(tables.surface_potential_V[m]),
            bottom=section.bottom,
            bottom_potential_V=section.bottom_potential_V,
        )
        out[m] = phi[read]
    return out


def _residual_of(section, bands):
    """The residual electron charge the constant-DOS sheet model put into the frozen charge."""
    from qhdesign.sp1d.sheets import layer_residual_charge

    return layer_residual_charge(bands)


def _require_primary(stack) -> None:
    if not any(lay.well == "primary" for lay in stack.layers):
        raise InputError(
            'the stack has no primary well (set well = "primary" on one layer)',
            source=str(getattr(stack, "source", "") or "stack"),
            key="layers",
        )


def island_column_from_stack(stack):
    """The island stage's layer column of a stack (the 1D stage places the sheets)."""
    from qhdesign.island import column_from_sheet_model

    refuse_gate_dielectric(stack, "the split-gap conductor island")
    _require_primary(stack)
    return column_from_sheet_model(_bands_to_sheets(stack))


def solve_island(source, geometry=None, settings=None, *, comm=None, **kwargs: Any):
    """The island stage (:func:`qhdesign.island.solve_island`) for a stack as well.

    ``source`` is a :class:`~qhdesign.stack.Stack` (the 1D stage runs to place the sheets, after
    the island's options are checked), a sheet model or an island column; every other argument
    is passed on.
    """
    from qhdesign.island import solve_island as solve
    from qhdesign.stack import Stack

    if isinstance(source, Stack):
        stack = source

        def deferred():
            return island_column_from_stack(stack)

        source = deferred
    return solve(source, geometry, settings, comm=comm, **kwargs)


def solve_island_operating(
    source, device, settings=None, *, sheets: str = DEFAULT_SHEET_MODEL, **kwargs: Any
):
    """The island at its operating point (:func:`qhdesign.island.stage.solve_island_operating`)
    for a stack as well.

    For a :class:`~qhdesign.stack.Stack` the 1D stage runs once: its sheet model gives the
    cross-section, and its disorder estimate (:func:`qhdesign.sp1d.scattering`, default options)
    gives each well's quantum lifetime for the Landau-level widths, unless ``settings`` gives a
    width or one lifetime; ``sheets`` picks the sheet model as in :func:`section_from_stack`. A
    :class:`~qhdesign.section.model.CrossSection` passes through.
    """
    from qhdesign.island.stage import OperatingSettings
    from qhdesign.island.stage import solve_island_operating as solve
    from qhdesign.stack import Stack

    st = settings or OperatingSettings()
    if isinstance(source, Stack):
        stack = source
        _require_primary(stack)
        from qhdesign.section.model import cross_section_from_sheet_model
        from qhdesign.sp1d import solve_bands
        from qhdesign.sp1d.sheets import sheet_model

        check_sheet_model(sheets)
        check_sheet_xc_choice(sheets, st.sheet_xc, st.compressibility_floor)
        bands = solve_bands(stack)
        section = cross_section_from_sheet_model(sheet_model(stack, bands))
        if sheets == "1d-tables":
            section = tabulated_section(section, stack, bands)
        if st.level_width_J is None and st.quantum_lifetime_s is None:
            from qhdesign.sp1d.scattering import scattering

            est = scattering(bands)
            kwargs.setdefault("lifetimes_s", {w.name: w.quantum_lifetime_s for w in est.wells})
        kwargs.setdefault("name", str(getattr(stack, "name", "") or ""))
        source = section
    return solve(source, device, st, **kwargs)
