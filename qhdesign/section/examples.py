"""A hand-built screened cross-section for tests, benchmarks and notebooks.

Invented numbers in the spirit of the Quillfeather Epitaxy Lab QL-24xx screened wafers: a
primary well with a screening well above and below, two donor layers and a frozen exposed
surface. It does not come from a 1D solve; the real pipeline builds its cross-section with
:func:`qhdesign.pipeline.section_from_stack`.
"""

from __future__ import annotations

import numpy as np
from scipy import constants as sc

from .model import CrossSection, SheetSpec

__all__ = ["GAAS_DOS_J_M2", "screened_section"]

#: m*/(pi hbar^2) with m* = 0.067 m_e (spin degenerate), J^-1 m^-2.
GAAS_DOS_J_M2 = 0.067 * sc.m_e / (np.pi * sc.hbar**2)


def screened_section(temperature_K: float = 0.02, surface: str = "frozen") -> CrossSection:
    """Screened stack: wells at 70, 115 and 160 nm; 2.0e11 / 1.0e11 cm^-2 primary / screening.

    Donors: 3.0e11 cm^-2 in a 4 nm layer at 40 nm and 1.0e11 cm^-2 at 190 nm; surface charge
    +0.4e11 cm^-2 balanced by the upper donor layer's excess (the column is neutral).
    """
    n_p, n_s = 2.0e15, 1.0e15
    zc = np.arange(0.5e-9, 2000e-9, 1e-9)
    rho = np.zeros_like(zc)
    rho[(zc > 38e-9) & (zc < 42e-9)] = 3.6e15 * sc.e / 4e-9
    rho[(zc > 188e-9) & (zc < 192e-9)] = 1.0e15 * sc.e / 4e-9
    sigma = -0.6e15 * sc.e  # surface states hold the rest of the upper donors' electrons
    sheets = (
        SheetSpec("screen_upper", "screening", 70e-9, GAAS_DOS_J_M2, n_s),
        SheetSpec("primary", "primary", 115e-9, GAAS_DOS_J_M2, n_p),
        SheetSpec("screen_lower", "screening", 160e-9, GAAS_DOS_J_M2, n_s),
    )
    return CrossSection(
        layer_z_m=np.array([0.0, 10e-9, 60e-9, 80e-9, 105e-9, 125e-9, 150e-9, 170e-9, 2000e-9]),
        layer_permittivity=np.array([12.9, 12.2, 12.9, 12.2, 12.9, 12.2, 12.9, 12.9]),
        sheets=sheets,
        temperature_K=temperature_K,
        charge_z_m=zc,
        charge_C_m3=rho,
        surface_charge_C_m2=sigma if surface == "frozen" else 0.0,
        surface_potential_V=-0.75,
        gate_barrier_J=0.75 * sc.e,
    )
