"""Figure labels a reader can take at a glance: true minus signs on thresholds, strips in the
legend, doped layers labelled with their free electrons."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
from conftest import SCREENED

from qhdesign.plotting import use_agg

use_agg()


def _texts(fig) -> list[str]:
    out = []
    for ax in fig.axes:
        out += [t.get_text() for t in ax.texts]
        leg = ax.get_legend()
        if leg is not None:
            out += [t.get_text() for t in leg.get_texts()]
    return out


def test_gate_thresholds_use_a_true_minus_and_appear_in_the_legend():
    from qhdesign.plotting.bands import plot_gate
    from qhdesign.sp1d import gate_response
    from qhdesign.stack import load_stack

    g = gate_response(load_stack(SCREENED), 0.1, -0.7, 0.05)
    texts = _texts(plot_gate(g))
    th = g.thresholds_V["primary"]
    shown = f"\u2212{abs(th):.3f} V"
    assert any(shown in t for t in texts), texts  # annotation and legend
    assert any("primary (primary), empties at " + shown in t for t in texts), texts
    assert not any(f"{th:+.3f}" in t for t in texts)  # no hyphen-minus version left


def test_donor_label_says_electrons():
    from qhdesign.plotting.bands import plot_bands
    from qhdesign.sp1d import solve_bands
    from qhdesign.stack import load_stack

    texts = _texts(plot_bands(solve_bands(load_stack(SCREENED))))
    donor = [t for t in texts if t.startswith("delta_")]
    assert donor, texts
    assert all("electrons" in t and "e/cm" not in t for t in donor), donor


def test_incompressible_strips_in_the_legend():
    from qhdesign.plotting.edge import plot_edge_profiles

    x = np.linspace(-300e-9, 600e-9, 200)
    n = 1e15 * np.clip(x / 300e-9, 0, 1)
    result = SimpleNamespace(
        solution=SimpleNamespace(x_m=x, sheet_names=["primary"], density_m2=[n]),
        lithographic_edge_m=0.0,
        wells=[SimpleNamespace(name="primary", edge_x_m=10e-9)],
        strips=[
            {"filling": 1.0, "centre_m": 100e-9, "width_m": 5e-9},
            {"filling": 1 / 3, "centre_m": 40e-9, "width_m": 3e-9},
        ],
        settings=SimpleNamespace(field_T=None, gate_voltage_V=-1.0),
        primary="primary",
    )
    texts = _texts(plot_edge_profiles(result))
    assert "incompressible strips (ν = 1, 1/3)" in texts, texts
    assert any("\u22121" in t for t in [a.get_title() for a in plot_edge_profiles(result).axes])
