"""Design review: one self-contained HTML page for a stack (``qhdesign report``).

The review runs the stages a grower or fab engineer needs (1D bands and flags, the gate
response, and, when their inputs are given, the 2D edge and the interferometer island) and
renders one HTML file with the figures embedded as inline SVG and the CSS inline: no script, no
font and no image is fetched from anywhere, so the file opens offline and can be forwarded.

Everything the page shows comes from the public results (``to_dict()``) of the stages, so the
page follows their changes. Every number shown in a highlighted box carries a ``data-key`` and
is also in the JSON of the same run (``key_numbers``), with the JSON path it comes from and the
scale to the displayed unit; the browser test checks one against the other.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from scipy import constants as sc

from .errors import InputError

__all__ = ["ReportSettings", "Review", "build_review", "render_html"]

UEV = 1e-6 * sc.e
CM2 = 1e4  # m^-2 per cm^-2
#: A primary well below this density (1e10 cm^-2) is "empty": a failing flag (common practice:
#: below it a GaAs 2DEG is not a usable conductor at typical mobilities).
EMPTY_PRIMARY_M2 = 1e14

SOURCES = (
    "I. Vurgaftman, J. R. Meyer, L. R. Ram-Mohan, J. Appl. Phys. 89, 5815 (2001): band parameters.",
    "S. Adachi, J. Appl. Phys. 58, R1 (1985): effective mass and permittivity of AlGaAs.",
    "D. J. BenDaniel, C. B. Duke, Phys. Rev. 152, 683 (1966): boundary conditions at interfaces.",
    "A. Trellakis et al., J. Appl. Phys. 81, 7880 (1997): predictor-corrector Schrödinger–Poisson.",
    "S. Luryi, Appl. Phys. Lett. 52, 501 (1988): quantum capacitance.",
    "D. B. Chklovskii, B. I. Shklovskii, L. I. Glazman, Phys. Rev. B 46, 4026 (1992): "
    "incompressible strips.",
    "B. I. Halperin, A. Stern, I. Neder, B. Rosenow, Phys. Rev. B 83, 155440 (2011): K_I, K_L, "
    "K_IL.",
    "B. Rosenow, A. Stern, Phys. Rev. Lett. 124, 106805 (2020): the fixed-filling window.",
    "Derivations of every formula used: docs/derivations.md in the qhdesign repository.",
)


@dataclass(frozen=True)
class ReportSettings:
    """What the review computes (SI). Sections without their inputs are left out.

    Parameters
    ----------
    gate_from_V, gate_to_V, gate_step_V
        Gate sweep of the 1D gate response (V).
    field_T
        Perpendicular field (T) for filling factors, the poor-screening flag and the edge's
        strips and velocity; None leaves those out.
    edge_gate_V
        Depletion-gate bias (V) of the 2D edge section; None: no edge section.
    island_radius_m
        Electronic island radius (m); None: no island section.
    filling, gap
        Laughlin filling (e.g. "1/3") and quasiparticle gap (e.g. "120 ueV") of the island.
    electron_temperature_K
        Electron temperature shown beside E_C (default: the stack's solve temperature).
    """

    gate_from_V: float = 0.2
    gate_to_V: float = -1.0
    gate_step_V: float = 0.02
    field_T: float | None = None
    edge_gate_V: float | None = None
    island_radius_m: float | None = None
    filling: str | None = None
    gap: str | None = None
    electron_temperature_K: float | None = None


@dataclass(frozen=True)
class Review:
    """Everything the page shows: the stages' JSON, the badges, the key numbers, the figures."""

    stack_file: str
    stack_text: str
    settings: ReportSettings
    data: dict[str, Any]
    badges: tuple[dict, ...]
    key_numbers: dict[str, dict]
    figures: dict[str, str] = field(default_factory=dict, compare=False, repr=False)

    def to_dict(self) -> dict:
        """The JSON of the run: the stages' own ``to_dict()``, badges and key numbers (SI)."""
        return {
            "stack_file": self.stack_file,
            "settings": {k: getattr(self.settings, k) for k in self.settings.__dataclass_fields__},
            **self.data,
            "badges": list(self.badges),
            "key_numbers": self.key_numbers,
        }


# ------------------------------------------------------------------------------ numbers
def _get(d: dict, path: str):
    cur: Any = d
    for part in path.split("."):
        if not isinstance(cur, dict) or part not in cur:
            return None
        cur = cur[part]
    return cur


def _fmt(value: float, digits: int) -> str:
    """``digits`` significant digits; plain notation from 1e-3 to 1e7, else "a×10^b"; a true
    minus sign (U+2212), which stays readable in any font."""
    import numpy as np

    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    if value == 0:
        return "0"
    if 1e-3 <= abs(value) < 1e7:
        text = np.format_float_positional(
            float(value), precision=digits, unique=False, fractional=False, trim="-"
        )
    else:
        mant, exp = f"{value:.{digits - 1}e}".split("e")
        text = f"{mant}×10^{int(exp)}"
    return text.replace("-", "\u2212")


def _plain(value: Any) -> str:
    """A model choice for the page: dicts as "key = value" pairs, floats with 4 digits."""
    if isinstance(value, dict):
        return "; ".join(f"{k} = {_plain(v)}" for k, v in value.items())
    if isinstance(value, float):
        return _fmt(value, 4)
    if isinstance(value, list | tuple):
        return ", ".join(_plain(v) for v in value) or "none"
    return "none" if value is None else str(value)


class _Numbers:
    """Key numbers: displayed text plus the JSON path and scale they come from."""

    def __init__(self, data: dict):
        self.data = data
        self.out: dict[str, dict] = {}

    def add(self, key: str, path: str, scale: float, unit: str, digits: int = 4):
        raw = _get(self.data, path)
        if raw is None or not isinstance(raw, int | float):
            return None
        value = float(raw) * scale
        self.out[key] = {
            "value": value,
            "unit": unit,
            "text": _fmt(value, digits),
            "digits": digits,
            "from": path,
            "scale": scale,
        }
        return value


# ------------------------------------------------------------------------------ badges
def _badge(name: str, status: str, sentence: str) -> dict:
    return {"flag": name, "status": status, "text": sentence}


def flag_badges(bands: dict, gate: dict | None, field_T: float | None) -> list[dict]:
    """One badge (pass / warn / fail / n/a) and one sentence per grower flag."""
    fl = bands.get("flags", {})
    wells = bands.get("wells", {})
    out = []
    prim = [n for n, w in wells.items() if w.get("role") == "primary"]
    if prim:
        n = wells[prim[0]]["sheet_density_m2"]
        if fl.get("primary_empty", n < EMPTY_PRIMARY_M2):
            out.append(
                _badge(
                    "primary well holds electrons",
                    "fail",
                    f"The primary well holds {n / CM2:.2g} cm^-2, below 1e10 cm^-2: it is empty. "
                    "Add donors, thin the setbacks or raise the gate bias.",
                )
            )
        else:
            out.append(
                _badge(
                    "primary well holds electrons",
                    "pass",
                    f"The primary well holds {n / CM2:.3g} cm^-2.",
                )
            )
    for name, w in wells.items():
        if w.get("role") == "screening" and w["sheet_density_m2"] < 1e13:
            out.append(
                _badge(
                    f"screening well {name} filled",
                    "warn",
                    f"{name} is empty at this bias, so it does not screen. Give it more donors or "
                    "move its delta layer closer.",
                )
            )
    e2 = fl.get("E2_minus_EF_eV")
    if fl.get("second_subband_occupied"):
        occupied = e2 is not None and e2 < 0
        out.append(
            _badge(
                "second subband of the primary",
                "fail" if occupied else "warn",
                f"The primary's second subband lies {_fmt((e2 or 0) * 1e3, 3)} meV from E_F"
                f"{' (occupied)' if occupied else ''}: two subbands conduct in parallel. "
                "Narrow the primary well or lower its density.",
            )
        )
    else:
        out.append(
            _badge(
                "second subband of the primary",
                "pass",
                "The primary's second subband is empty, more than 2 meV above E_F.",
            )
        )
    if fl.get("parallel_conduction"):
        out.append(
            _badge(
                "parallel conduction",
                "fail",
                f"Electrons outside the wells ({', '.join(fl.get('parallel_layers', []))}) form a "
                "parallel channel. Reduce or move that doping; for a buffer channel use a pinned "
                "substrate or a back gate.",
            )
        )
    else:
        out.append(
            _badge(
                "parallel conduction",
                "pass",
                "No layer outside the wells holds more than 1e9 cm^-2.",
            )
        )
    if field_T is None:
        out.append(
            _badge(
                "screening wells compressible",
                "n/a",
                "Not evaluated: give --field to check the screening wells' filling factors.",
            )
        )
    elif fl.get("poor_screening"):
        out.append(
            _badge(
                "screening wells compressible",
                "warn",
                f"At {field_T:g} T {', '.join(fl.get('poor_screening_wells', []))} sit near an "
                "integer filling, where they screen poorly. Shift their density (doping) away from "
                "integer filling at the operating field.",
            )
        )
    else:
        out.append(
            _badge(
                "screening wells compressible",
                "pass",
                f"At {field_T:g} T no screening well is within 0.15 of an integer filling.",
            )
        )
    splits = fl.get("tunnel_splitting_eV", {}) or {}
    biggest = max(splits.values(), default=0.0) or 0.0
    if fl.get("tunnel_coupled"):
        out.append(
            _badge(
                "tunnel coupling",
                "warn",
                f"Neighbouring wells are tunnel coupled (splitting up to {biggest * 1e6:.3g} ueV, "
                "above 10 ueV). Thicken the setbacks or raise their Al fraction.",
            )
        )
    else:
        out.append(
            _badge(
                "tunnel coupling",
                "pass",
                f"Largest tunnel splitting {biggest * 1e6:.2g} ueV, below 10 ueV.",
            )
        )
    if fl.get("donor_supply_low"):
        out.append(
            _badge(
                "donor supply",
                "warn",
                "Less than 10 % of the donors are left over after the surface and the wells take "
                "their share: small growth errors empty wells. Add donors.",
            )
        )
    else:
        out.append(
            _badge(
                "donor supply",
                "pass",
                "More than 10 % of the donors remain as a margin against growth errors.",
            )
        )
    if fl.get("forward_leakage"):
        out.append(
            _badge(
                "gate leakage",
                "fail",
                "The gate is forward biased beyond the leakage limit; lower the bias.",
            )
        )
    if gate is not None:
        win = gate.get("window_V")
        if win is None or not math.isfinite(win):
            out.append(
                _badge(
                    "depletion window",
                    "fail",
                    "The sweep does not empty the top screening well and then the primary, so "
                    "there is no gate range with only the primary filled under the gate. Extend "
                    "the sweep or revise the setbacks.",
                )
            )
        else:
            out.append(
                _badge(
                    "depletion window",
                    "pass" if win > 0.05 else "warn",
                    f"Between the top screening well's and the primary's thresholds lies a "
                    f"{win * 1e3:.0f} mV window"
                    f"{'' if win > 0.05 else ', narrow for gate control'}.",
                )
            )
        if gate.get("warnings"):
            for w in gate["warnings"]:
                if w.startswith("parallel conduction"):
                    out.append(_badge("parallel conduction under bias", "warn", w + "."))
    return out


# ------------------------------------------------------------------------------ stages
def _layers_table(stack_dict: dict) -> list[dict]:
    rows = []
    for lay in stack_dict["layers"]:
        x = lay.get("x") or 0.0
        rows.append(
            {
                "name": lay["name"],
                "material": "GaAs" if x == 0 else f"Al{x:g}Ga{1 - x:g}As",
                "thickness_nm": _fmt((lay["z_bottom_m"] - lay["z_top_m"]) * 1e9, 4),
                "top_nm": _fmt(lay["z_top_m"] * 1e9, 4),
                "role": lay.get("well") or "",
                "doping": (
                    f"{lay['donor_density_m3'] * (lay['z_bottom_m'] - lay['z_top_m']) / CM2:.3g}"
                    f" cm^-2 ({lay.get('donor_model') or 'donor'})"
                    if lay.get("donor_density_m3")
                    else ""
                ),
            }
        )
    return rows


def build_review(stack_file: str | Path, settings: ReportSettings | None = None) -> Review:
    """Run the stages for the review of ``stack_file`` and collect what the page shows.

    The 1D stage and the gate response always run; the edge (DOLFINx) runs when
    ``settings.edge_gate_V`` is given, the island when ``settings.island_radius_m`` is given.
    """
    from .sp1d import BandsOptions, gate_response, solve_bands
    from .stack import load_stack

    s = settings or ReportSettings()
    path = Path(stack_file)
    stack = load_stack(path)
    text = path.read_text(encoding="utf-8")
    if not s.gate_step_V > 0:
        raise InputError("gate step must be > 0 V", source="option --step")
    if s.field_T is not None and not 0 < s.field_T <= 100:
        raise InputError(
            "field out of range; allowed above 0 T up to 100 T", source="option --field"
        )
    bands = solve_bands(stack, options=BandsOptions(field_T=s.field_T))
    gate = gate_response(stack, s.gate_from_V, s.gate_to_V, s.gate_step_V)
    data: dict[str, Any] = {
        "stack": stack.to_dict(),
        "bands": bands.to_dict(),
        "gate": gate.to_dict(),
    }
    results: dict[str, Any] = {"stack": stack, "bands": bands, "gate": gate}
    if s.edge_gate_V is not None:
        from .pipeline import section_from_stack
        from .section import EdgeSettings, MeshOptions, SolverOptions, solve_edge

        section = section_from_stack(stack)
        surf = section.surface_mode if stack.surface.kind == "exposed" else "pinned"
        edge = solve_edge(
            section,
            EdgeSettings(s.edge_gate_V, field_T=s.field_T),
            MeshOptions(),
            SolverOptions(exposed=surf),
        )
        from .pipeline import sheet_model_info

        data["edge"] = edge.to_dict()
        data["edge"]["sheet_model"] = sheet_model_info(section)
        results["edge"] = edge
    if s.island_radius_m is not None:
        from .island_options import island_inputs
        from .pipeline import solve_island

        island = solve_island(
            stack,
            *island_inputs(radius=s.island_radius_m, filling=s.filling, gap=s.gap),
            keep_potentials=True,
        )
        data["island"] = island.to_dict()
        results["island"] = island
    t_e = s.electron_temperature_K or data["bands"].get("temperature_K")
    data["electron_temperature_K"] = t_e
    numbers = _key_numbers(data, t_e)
    badges = flag_badges(data["bands"], data["gate"], s.field_T)
    return Review(str(path), text, s, data, tuple(badges), numbers, _figures(results))


def _key_numbers(data: dict, t_e: float | None) -> dict[str, dict]:
    num = _Numbers(data)
    for name, w in data["bands"]["wells"].items():
        num.add(f"density.{name}", f"bands.wells.{name}.sheet_density_m2", 1 / CM2, "cm^-2", 4)
        if w.get("filling_factor") is not None:
            num.add(f"filling.{name}", f"bands.wells.{name}.filling_factor", 1.0, "", 3)
    for name in data["gate"].get("thresholds_V", {}):
        num.add(f"threshold.{name}", f"gate.thresholds_V.{name}", 1.0, "V", 4)
    num.add("gate.window", "gate.window_V", 1e3, "mV", 4)
    if "edge" in data:
        for name in data["edge"]["wells"]:
            num.add(f"edge.depletion.{name}", f"edge.wells.{name}.depletion_width_m", 1e9, "nm", 4)
            num.add(f"edge.healing.{name}", f"edge.wells.{name}.healing_length_m", 1e9, "nm", 4)
        num.add("edge.velocity", "edge.edge_velocity_m_per_s", 1e-3, "km/s", 4)
        num.add("edge.shift", "edge.edge_shift_m_per_V", 1e9, "nm/V", 4)
    if "island" in data:
        num.add("island.E_C_ueV", "island.charging_energy_J", 1 / UEV, "ueV", 4)
        num.add("island.E_C_mK", "island.charging_energy_J", 1e3 / sc.k, "mK", 4)
        num.add("island.ratio", "island.K_IL_over_K_I", 1.0, "", 4)
        for k in ("K_I", "K_L", "K_IL"):
            num.add(f"island.{k}", f"island.elastance_J.{k}", 1 / UEV, "ueV", 4)
        for k in ("C_II", "C_LL", "C_IL"):
            num.add(f"island.{k}", f"island.capacitance_F.{k}", 1e18, "aF", 4)
        for k in ("compressible_period_T", "incompressible_period_T", "fixed_filling_window_T"):
            num.add(f"island.{k[:-2]}", f"island.quantum_hall.{k}", 1e3, "mT", 4)
    if t_e is not None:
        num.add("electron_temperature_mK", "electron_temperature_K", 1e3, "mK", 4)
    return num.out


def _figures(results: dict) -> dict[str, str]:
    from .plotting.report import review_figures

    return review_figures(results)


# ------------------------------------------------------------------------------ HTML
def render_html(review: Review) -> str:
    """The review as one self-contained HTML document (Jinja2 template in qhdesign/templates)."""
    import jinja2

    from . import __version__

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("qhdesign", "templates"),
        autoescape=jinja2.select_autoescape(["html", "j2"]),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    tpl = env.get_template("review.html.j2")
    data = review.data
    models = {
        **data["stack"].get("models", {}),
        "surface": data["stack"].get("surface"),
        "substrate": data["stack"].get("substrate"),
    }
    if "island" in data:
        models["island"] = {
            k: v for k, v in data["island"].get("model", {}).items() if k != "sheets"
        }
    if "edge" in data:
        models["edge"] = {
            k: data["edge"].get(k)
            for k in ("surface", "edge_fraction_of_bulk")
            if k in data["edge"]
        } or "2D Thomas–Fermi, defaults"
        sheet = data["edge"].get("sheet_model", {}).get("model")
        if sheet and isinstance(models["edge"], dict):
            models["edge"]["sheets"] = sheet
    models = {k: _plain(v) for k, v in models.items()}
    return tpl.render(
        r=review,
        d=data,
        n=review.key_numbers,
        layers=_layers_table(data["stack"]),
        figures=review.figures,
        badges=review.badges,
        version=__version__,
        models=models,
        sources=SOURCES,
        fmt=_fmt,
        cm2=CM2,
    )
