"""Stack -> bands -> sheet model -> FEM stages: the one place that joins them.

The 1D stage (:mod:`qhdesign.sp1d`) reduces a :class:`~qhdesign.stack.Stack` to a
:class:`~qhdesign.sheets.SheetModel`; the FEM stages (:mod:`qhdesign.section`,
:mod:`qhdesign.island`) are built from that sheet model alone and import neither the stack nor
the 1D stage. This module runs the chain for a stack and refuses what the FEM stages do not model
(a gate dielectric) with an error that names the stack file and key.

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
    "island_column_from_stack",
    "refuse_gate_dielectric",
    "section_from_stack",
    "sheet_model_from_stack",
    "solve_island",
    "solve_island_operating",
]


def refuse_gate_dielectric(stack, stage: str) -> None:
    """The 2D and island models put gate metal directly on the semiconductor: refuse a stack
    with a gate dielectric (one-line InputError naming the key)."""
    if float(getattr(stack.surface, "dielectric_thickness", 0.0) or 0.0) > 0.0:
        raise InputError(
            f"{stage} puts gate metal directly on the semiconductor; a gate dielectric is "
            "not modelled yet (allowed: surface.dielectric_thickness = 0)",
            source=str(getattr(stack, "source", "") or "stack"),
            key="surface.dielectric_thickness",
        )


def sheet_model_from_stack(stack, *, stage: str = "the 2D stage"):
    """Run the 1D stage on ``stack`` at zero bias and reduce it to a sheet model.

    Raises
    ------
    InputError
        A gate dielectric (not modelled by the FEM stages) or an invalid stack.
    ConvergenceError
        If the 1D solve does not converge.
    """
    refuse_gate_dielectric(stack, stage)
    return _bands_to_sheets(stack)


def _bands_to_sheets(stack):
    from qhdesign.sp1d import solve_bands
    from qhdesign.sp1d.sheets import sheet_model

    return sheet_model(stack, solve_bands(stack))


def section_from_stack(stack, *, gate_barrier_J: float | None = None):
    """Run the 1D stage on a stack and build the cross-section (donors frozen at their 1D state).

    Same as ``cross_section_from_sheet_model(sheet_model_from_stack(stack))``.
    """
    from qhdesign.section.model import cross_section_from_sheet_model

    return cross_section_from_sheet_model(
        sheet_model_from_stack(stack), gate_barrier_J=gate_barrier_J
    )


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
