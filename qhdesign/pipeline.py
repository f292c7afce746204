"""Stack -> bands -> sheet model -> FEM stages: the one place that joins them.

The 1D stage (:mod:`qhdesign.sp1d`) reduces a :class:`~qhdesign.stack.Stack` to a
:class:`~qhdesign.sheets.SheetModel`; the FEM stages (:mod:`qhdesign.section`,
:mod:`qhdesign.island`) are built from that sheet model alone and import neither the stack nor
the 1D stage. This module runs the chain for a stack and refuses what a FEM stage does not model
(a gate dielectric in the island stage) with an error that names the stack file and key.

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

from qhdesign.errors import InputError

__all__ = [
    "GATE_BARRIER_RANGE_J",
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
    sheet_xc: str = "none",
    compressibility_floor: float | None = None,
):
    """Run the 1D stage on a stack and build the cross-section (donors frozen at their 1D state).

    Same as ``cross_section_from_sheet_model(sheet_model_from_stack(stack))``; a gate barrier
    outside 0 to 3 eV is refused (key ``gate_barrier_J``) before the 1D solve.

    ``sheet_xc`` (:data:`qhdesign.sheetxc.SHEET_XC_MODELS`): ``"none"`` keeps the closed-form
    Thomas–Fermi sheets; ``"exchange"`` or ``"exchange+correlation"`` gives every sheet the law
    of :func:`qhdesign.sheetxc.with_sheet_xc` (its own in-plane exchange, optionally
    correlation, with dmu/dn floored at ``compressibility_floor`` times pi hbar^2/m*; default
    :data:`qhdesign.sheetxc.DEFAULT_COMPRESSIBILITY_FLOOR`). Both are checked before the 1D solve.
    """
    from qhdesign.section.model import cross_section_from_sheet_model
    from qhdesign.sheetxc import DEFAULT_COMPRESSIBILITY_FLOOR, check_sheet_xc, with_sheet_xc

    floor = (
        DEFAULT_COMPRESSIBILITY_FLOOR if compressibility_floor is None else compressibility_floor
    )
    check_sheet_xc(sheet_xc, floor)

    lo, hi = GATE_BARRIER_RANGE_J
    if gate_barrier_J is not None and not lo < gate_barrier_J < hi:
        raise InputError(
            f"gate barrier {gate_barrier_J / 1.602176634e-19:.4g} eV is out of range; allowed "
            f"between {lo / 1.602176634e-19:g} and {hi / 1.602176634e-19:g} eV",
            key="gate_barrier_J",
        )

    section = cross_section_from_sheet_model(
        sheet_model_from_stack(stack), gate_barrier_J=gate_barrier_J
    )
    return with_sheet_xc(section, sheet_xc, compressibility_floor=floor)


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

    refuse_gate_dielectric(stack, "the island model")
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


def solve_island_operating(source, device, settings=None, **kwargs: Any):
    """The island at its operating point (:func:`qhdesign.island.stage.solve_island_operating`)
    for a stack as well.

    For a :class:`~qhdesign.stack.Stack` the 1D stage runs once: its sheet model gives the
    cross-section, and its disorder estimate (:func:`qhdesign.sp1d.scattering`, default options)
    gives each well's quantum lifetime for the Landau-level widths, unless ``settings`` gives a
    width or one lifetime. A :class:`~qhdesign.section.model.CrossSection` passes through.
    """
    from qhdesign.island.stage import OperatingSettings
    from qhdesign.island.stage import solve_island_operating as solve
    from qhdesign.stack import Stack

    st = settings or OperatingSettings()
    if isinstance(source, Stack):
        stack = source
        refuse_gate_dielectric(stack, "the island model")
        _require_primary(stack)
        from qhdesign.section.model import cross_section_from_sheet_model
        from qhdesign.sp1d import solve_bands
        from qhdesign.sp1d.sheets import sheet_model

        bands = solve_bands(stack)
        section = cross_section_from_sheet_model(sheet_model(stack, bands))
        if st.level_width_J is None and st.quantum_lifetime_s is None:
            from qhdesign.sp1d.scattering import scattering

            est = scattering(bands)
            kwargs.setdefault("lifetimes_s", {w.name: w.quantum_lifetime_s for w in est.wells})
        kwargs.setdefault("name", str(getattr(stack, "name", "") or ""))
        source = section
    return solve(source, device, st, **kwargs)
