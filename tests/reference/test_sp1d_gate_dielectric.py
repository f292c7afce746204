"""Gate dielectric in the 1D stage: a charge-free layer in series with the semiconductor.

Analytic (Gauss's law in a charge-free dielectric of thickness t and permittivity eps_d): for the
same charge state of the semiconductor, a gate on the dielectric must sit higher by
sigma_gate t/(eps_0 eps_d) than a gate on the bare surface, so (i) the well densities at
V_d = V_0 + sigma_gate t/(eps_0 eps_d) equal those at V_0, and (ii) the capacitances add in series:
1/(e dn/dV)_d = 1/(e dn/dV)_0 + t/(eps_0 eps_d). Donors always ionised, so freeze-out is the same
with and without the dielectric. t = 20 nm, eps_d = 9 (the issue's case).
"""

from __future__ import annotations

import pytest
from scipy import constants as sc

from qhdesign.sp1d import solve_bands
from qhdesign.stack import loads_stack

T_D, EPS_D = 20e-9, 9.0
TXT = """
[wafer]
name = "test: gated well"
temperature = "300 mK"
freeze_temperature = "300 mK"
[surface]
kind = "gate"
barrier = "0.8 eV"
bias = "0 V"
{diel}
[[layers]]
name = "cap"
material = "GaAs"
thickness = "5 nm"
[[layers]]
name = "barrier_upper"
material = "AlGaAs"
x = 0.3
thickness = "40 nm"
[[layers]]
name = "delta"
material = "AlGaAs"
x = 0.3
thickness = "2 nm"
[[layers]]
name = "spacer"
material = "AlGaAs"
x = 0.3
thickness = "40 nm"
[[layers]]
name = "primary"
material = "GaAs"
thickness = "20 nm"
well = "primary"
[[layers]]
name = "barrier_lower"
material = "AlGaAs"
x = 0.3
thickness = "200 nm"
[doping.delta]
sheet = "1.5e12 cm^-2"
donor = "ionized"
[substrate]
kind = "deep"
"""
BARE = loads_stack(TXT.format(diel=""))
COATED = loads_stack(TXT.format(diel='dielectric_thickness = "20 nm"\ndielectric_permittivity = 9'))


def shifted(v0: float) -> tuple[float, float, float]:
    r0 = solve_bands(BARE, gate_voltage=v0)
    vd = v0 + r0.surface_charge_C_m2 * T_D / (sc.epsilon_0 * EPS_D)
    rd = solve_bands(COATED, gate_voltage=vd)
    return r0.primary.sheet_density_m2, rd.primary.sheet_density_m2, vd


@pytest.mark.parametrize("v0", [0.1, 0.0, -0.15])
def test_same_state_at_the_series_shifted_voltage(v0, record_check):
    n0, nd, _ = shifted(v0)
    record_check(
        f"1D well density, 20 nm eps 9 gate dielectric, series-shifted voltage (V0 = {v0} V)",
        "analytic: Gauss's law in a charge-free dielectric, V_d = V_0 + sigma t/(eps0 eps_d)",
        nd,
        n0,
        1e-5,
    )
    assert nd == pytest.approx(n0, rel=1e-5)


def test_capacitances_add_in_series(record_check):
    dv = 0.01

    def slope(stack, v):
        a = solve_bands(stack, gate_voltage=v + dv).primary.sheet_density_m2
        b = solve_bands(stack, gate_voltage=v - dv).primary.sheet_density_m2
        return (a - b) / (2 * dv)

    v0 = 0.0  # one filled subband, no parallel conduction (1.5e11 cm^-2)
    _, _, vd = shifted(v0)
    inv0 = 1 / (sc.e * slope(BARE, v0))
    invd = 1 / (sc.e * slope(COATED, vd))
    record_check(
        "1D gated well: 1/C with a 20 nm eps 9 dielectric vs 1/C without + t/(eps0 eps_d)",
        "analytic: series capacitors (Gauss's law in a charge-free dielectric)",
        invd,
        inv0 + T_D / (sc.epsilon_0 * EPS_D),
        0.01,
    )
    assert invd == pytest.approx(inv0 + T_D / (sc.epsilon_0 * EPS_D), rel=0.01)
