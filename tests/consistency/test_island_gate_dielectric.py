"""Gate dielectric in the operating-point island (issue 10, item 2).

Checks:
- far under a wide ring gate on a 20 nm eps_r 9 dielectric the island's nonlinear solve gives the
  1D gated density (the 1D stage meshes the dielectric as a charge-free layer) within 1 %, and
  the ungated centre and outside give the 1D bulk density;
- the series (Robin) model of the layer equals a meshed dielectric layer under the gate in the
  axisymmetric capacitance solver (an independent discretisation: the layer's own cells, with
  its lateral field at the gate edges) within 1 %, and a whole-area plate gives the analytic
  series capacitor;
- as the layer thins (t = 1 pm) the island's K_I, K_L, K_IL and edge radius tend to the
  metal-on-semiconductor island;
- the response's two forms of K_IL/K_I (reciprocity and direct) agree with the layer present;
- ``qhdesign island`` on a stack with a dielectric runs and reports the layer; the split-gap
  conductor island still refuses it in one line naming the key.
"""

from __future__ import annotations

import json
import math
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc

from qhdesign.stack import loads_stack

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "reference"))
from test_sp1d_gate_dielectric import TXT

T_D, EPS_D = 20e-9, 9.0  # the case
COATED_TXT = TXT.format(diel='dielectric_thickness = "20 nm"\ndielectric_permittivity = 9').replace(
    'bias = "0 V"', 'bias = "-0.6 V"'
)
COATED = loads_stack(COATED_TXT)
BARE = loads_stack(TXT.format(diel=""))
CUT_V = -1.0  # the 1D stage empties the well under the coated gate below about -0.85 V


@pytest.fixture(scope="module")
def coated_section():
    from qhdesign.pipeline import section_from_stack

    return section_from_stack(COATED)


def test_far_under_the_ring_gate_equals_1d(coated_section, record_check):
    # consistency with the 1D stage (issue 10: 1 %): 1 um from either edge of a 2 um wide ring
    # gate at -0.65 V the sheet is the gated 1D column; at the centre and outside it is the
    # column at the stack's bias (-0.6 V)
    from qhdesign.island.operating import IslandDevice, solve_operating_point
    from qhdesign.sp1d import solve_bands

    v, R, W = -0.65, 1.0e-6, 2.0e-6
    op = solve_operating_point(coated_section, IslandDevice(v, gate_radius_m=R, gate_width_m=W))
    r, n = op.r_m, op.solution.density_m2[0]
    mid = float(n[np.argmin(np.abs(r - (R + 0.5 * W)))])
    n1 = solve_bands(COATED, gate_voltage=v).primary.sheet_density_m2
    bulk = coated_section.sheets[0].density_m2
    record_check(
        "island on a 20 nm eps 9 gate dielectric: density mid-way under the ring gate vs 1D, "
        "-0.65 V",
        "issue 10: 1D and 2D far field within 1 % (1D: the dielectric as a charge-free layer)",
        mid,
        n1,
        0.01,
    )
    record_check(
        "island on a 20 nm eps 9 gate dielectric: centre and outer density vs 1D bulk",
        "consistency with the 1D stage (issue 9: 1 %)",
        np.array([n[0], n[-1]]),
        np.array([bulk, bulk]),
        0.01,
    )
    assert mid == pytest.approx(n1, rel=0.01)
    assert n[0] == pytest.approx(bulk, rel=0.01) and n[-1] == pytest.approx(bulk, rel=0.01)
    assert mid < 0.8 * bulk  # the gate does act through the layer


def _series_problems(t_d: float):
    """A disk (the island) 90 nm deep under a grounded ring gate on a dielectric: the Robin
    model, and the layer meshed under the gate only (elsewhere a layer of permittivity 1e-6 under
    a free top: the exposed surface of the Robin model, which carries no induced charge)."""
    from qhdesign.fem.capacitance import AxiLine, AxiProblem

    eps_s, d, a, g0, g1, R, depth = 12.9, 90e-9, 0.6e-6, 0.7e-6, 1.7e-6, 4e-6, 4e-6
    lines = (AxiLine(d, 0.0, a, "conductor", "I"),)
    robin = AxiProblem(
        (0.0, depth),
        (eps_s,),
        lines,
        R,
        ((0.0, g0, "free"), (g0, g1, "dielectric"), (g1, R, "free")),
        far_centre_z_m=d,
        top_dielectric_thickness_m=t_d,
        top_dielectric_permittivity=EPS_D,
    )
    meshed = AxiProblem(
        (-t_d, 0.0, depth),
        (1e-6, eps_s),
        lines,
        R,
        ((0.0, g0, "free"), (g0, g1, "ground"), (g1, R, "free")),
        far_centre_z_m=d,
        permittivity_patches=((-t_d, 0.0, g0, g1, EPS_D),),
    )
    bare = replace(robin, top=((0.0, g0, "free"), (g0, g1, "ground"), (g1, R, "free")))
    return robin, meshed, bare


@pytest.mark.parametrize("t_d", [20e-9, 5e-9])
def test_series_layer_equals_a_meshed_layer(t_d, record_check):
    # independent discretisation: the layer's own cells (2D field in it, fringing at the gate
    # edges) against its series capacitance per area on the surface; 1 % (issue 10's tolerance
    # for the series model). Measured 0.17 % at 20 nm, converged (0.16 % at refine 2); the
    # layer itself changes C by 7.5 %, so the check resolves it
    from qhdesign.fem.capacitance import AxiMeshOptions, solve_capacitance

    mo = AxiMeshOptions(h_edge_m=1e-9, h_line_m=1e-9)
    robin, meshed, bare = (solve_capacitance(p, mo).matrix_F[0, 0] for p in _series_problems(t_d))
    record_check(
        f"axisymmetric C of a disk under a ring gate on a {t_d * 1e9:g} nm eps 9 layer: Robin "
        "series model vs meshed layer",
        "independent discretisation (the layer meshed under the gate); issue 10: 1 %",
        robin,
        meshed,
        0.01,
        unit="F",
    )
    assert robin == pytest.approx(meshed, rel=0.01)
    assert abs(bare / meshed - 1) > 2 * abs(robin / meshed - 1)  # the layer is resolved


def test_whole_area_plate_is_the_series_capacitor(record_check):
    # analytic: a conductor plate of radius R at depth d under a gate on a dielectric covering
    # the whole area, zero normal field at r = R and below: a 1D field, so
    # C = eps_0 pi R^2 / (d/eps_s + t/eps_d) (parallel-plate capacitors in series)
    from qhdesign.fem.capacitance import AxiLine, AxiProblem, solve_capacitance

    eps_s, d, R = 12.9, 90e-9, 1e-6
    p = AxiProblem(
        (0.0, 200e-9),
        (eps_s,),
        (AxiLine(d, 0.0, R, "conductor", "plate"),),
        R,
        ((0.0, R, "dielectric"),),
        bottom="free",
        side="free",
        top_dielectric_thickness_m=T_D,
        top_dielectric_permittivity=EPS_D,
    )
    C = solve_capacitance(p).matrix_F[0, 0]
    ref = sc.epsilon_0 * math.pi * R**2 / (d / eps_s + T_D / EPS_D)
    record_check(
        "axisymmetric plate under a 20 nm eps 9 gate dielectric: C vs series capacitors",
        "analytic: C = eps0 pi R^2 / (d/eps_s + t/eps_d)",
        C,
        ref,
        1e-6,
        unit="F",
    )
    assert C == pytest.approx(ref, rel=1e-6)


def _island(section, t_d=None):
    from qhdesign.island.operating import IslandDevice
    from qhdesign.island.stage import OperatingSettings, solve_island_operating

    if t_d is not None:
        section = replace(
            section, gate_dielectric_thickness_m=t_d, gate_dielectric_permittivity=EPS_D
        )
    st = OperatingSettings(field_T=18.8, level_width_J=0.5e-3 * sc.e)
    res = solve_island_operating(section, IslandDevice(-0.6, gate_radius_m=1.0e-6), st)
    p = res.point
    return np.array([p.K_I_electrostatic_J, p.K_L_J, p.K_IL_J, p.strip.interfering_radius_m]), res


def test_thin_layer_tends_to_metal_on_semiconductor(record_check):
    # convergence: the Robin gate (series capacitance eps_0 eps_d/t) tends to the Dirichlet gate
    # of the bare island as t -> 0. Tolerance 0.5 %: the two discretisations place the gate edge
    # half a cell apart (the bare solve sets the edge node to the mean of the gate and surface
    # values, the Robin one to the surface value): measured, the radius difference halves under
    # refinement (0.040 % -> 0.020 %) and the K's differ by at most 0.16 %. At t = 1 nm the K's
    # differ by up to 3.8 % (so the check resolves the layer).
    from qhdesign.pipeline import section_from_stack

    bare_section = section_from_stack(BARE)
    k0, _ = _island(bare_section)
    k_thin, _ = _island(bare_section, 1e-12)
    k_1nm, _ = _island(bare_section, 1e-9)
    record_check(
        "island K_I, K_L, K_IL, r_I with a 1 pm eps 9 gate dielectric vs metal on GaAs",
        "convergence: Robin series gate -> Dirichlet gate as t -> 0 (0.5 %: gate-edge node)",
        k_thin,
        k0,
        0.005,
    )
    assert np.max(np.abs(k_thin / k0 - 1)) < 0.005
    assert np.max(np.abs(k_1nm / k0 - 1)) > 0.01


def test_response_forms_agree_with_the_layer(coated_section, record_check):
    # analytic (Green's reciprocity, docs/island.md): the layer's Robin term is in the energy
    # form of both the reciprocity and the direct K_IL/K_I
    from qhdesign.island.operating import IslandDevice
    from qhdesign.island.stage import OperatingSettings, solve_island_operating

    res = solve_island_operating(
        coated_section, IslandDevice(CUT_V, gate_radius_m=1.0e-6), OperatingSettings()
    )
    p = res.point
    record_check(
        "island on a 20 nm eps 9 gate dielectric: K_IL/K_I reciprocity form = direct form",
        "analytic: Green's reciprocity (docs/island.md)",
        p.r_reciprocity,
        p.r_direct,
        1e-6,
    )
    assert p.r_direct == pytest.approx(p.r_reciprocity, rel=1e-6, abs=0)
    assert res.operating.sheets[0].cut_under_gate
    d = res.to_dict()["gate_dielectric"]
    assert d["thickness_m"] == pytest.approx(T_D) and d["permittivity_rel"] == EPS_D


def test_cli_island_reports_the_dielectric(cli_runner, app, tmp_path):
    stack = tmp_path / "coated.toml"
    stack.write_text(COATED_TXT)
    out = tmp_path / "i.json"
    args = ["island", str(stack), "--gate-radius", "1 um", "--gate-voltage", str(CUT_V)]
    res = cli_runner.invoke(app, [*args, "--gap", "120 ueV", "--json", str(out)])
    assert res.exit_code == 0, res.output
    assert "gate dielectric: 20 nm, eps_r = 9" in res.output
    d = json.loads(out.read_text())["gate_dielectric"]
    assert d["thickness_m"] == pytest.approx(T_D, rel=1e-12)
    # analytic: series capacitance per area eps_0 eps_d / t
    assert d["capacitance_F_m2"] == pytest.approx(sc.epsilon_0 * EPS_D / T_D, rel=1e-12)


def test_conductor_island_refuses_in_one_line(cli_runner, app, tmp_path):
    from conftest import assert_one_line_error

    stack = tmp_path / "coated.toml"
    stack.write_text(COATED_TXT)
    res = cli_runner.invoke(app, ["island", str(stack), "--radius", "0.8 um"])
    assert_one_line_error(res, "surface.dielectric_thickness", "= 0", "conductor island")


@pytest.mark.mpi
def test_mpi_two_ranks_equal_serial(tmp_path):
    # determinism (design rule): mpiexec -n 2 gives the serial numbers with the layer (measured
    # 1e-14)
    import os
    import subprocess

    from qhdesign.island.operating import IslandDevice
    from qhdesign.island.stage import OperatingSettings
    from qhdesign.pipeline import solve_island_operating

    stack = tmp_path / "coated.toml"
    stack.write_text(COATED_TXT)
    res = solve_island_operating(
        COATED, IslandDevice(CUT_V, gate_radius_m=1.0e-6), OperatingSettings(gap_J=120e-6 * sc.e)
    )
    out = tmp_path / "mpi.json"
    bindir = Path(sys.executable).parent
    cmd = [
        str(bindir / "mpiexec"), "-n", "2", str(bindir / "qhdesign"), "island", str(stack),
        "--gate-radius", "1 um", "--gate-voltage", str(CUT_V), "--gap", "120 ueV",
        "--json", str(out),
    ]  # fmt: skip
    env = dict(os.environ, OMP_NUM_THREADS="1")
    subprocess.run(cmd, check=True, env=env, capture_output=True, timeout=600)
    data = json.loads(out.read_text())
    p = res.point
    for key, val in (("K_I_J", p.K_I_J), ("K_L_J", p.K_L_J), ("K_IL_J", p.K_IL_J)):
        assert data[key] == pytest.approx(val, rel=1e-10, abs=0), key
