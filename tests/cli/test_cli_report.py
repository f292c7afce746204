"""``qhdesign report``: the design review as one self-contained HTML page.

The browser test opens the demo review in headless Chromium (Debian package ``chromium``;
``make browser`` installs it) through the DevTools protocol: no console errors, no request that
leaves the file, every figure with a non-zero size, the key numbers on the page equal to the JSON
of the same run, and a full-page screenshot saved in the test's temporary folder. Without
Chromium it fails with a message saying so (it never skips).
"""

from __future__ import annotations

import base64
import json
import math
import re

import pytest
from conftest import SCREENED, assert_one_line_error

from qhdesign.report import EMPTY_PRIMARY_M2, flag_badges

# the demo review of `make demo` (Makefile)
DEMO_ARGS = [
    "--field", "2 T", "--gate-voltage", "-1.0", "--island", "1.15 um", "--filling", "1/3",
    "--gap-energy", "120 ueV",
]  # fmt: skip
SECTIONS = ("stack", "bands", "flags", "gate", "edge", "island", "inputs")


def page_number(text: str) -> float:
    """A number as the page shows it (U+2212 minus, a×10^b) back to a float."""
    return float(text.replace("\u2212", "-").replace("×10^", "e").strip())


def lookup(data: dict, path: str):
    for part in path.split("."):
        data = data[part]
    return data


def check_key_numbers(shown: dict[str, str], data: dict) -> int:
    """Every number shown with a data-key equals the JSON of the same run (to its digits), and
    the JSON's key number equals the stage's own JSON value times the stated scale."""
    keys = data["key_numbers"]
    for key, text in shown.items():
        entry = keys[key]
        src = lookup(data, entry["from"]) * entry["scale"]
        assert entry["value"] == pytest.approx(src, rel=1e-12), key
        digits = entry["digits"]
        assert page_number(text) == pytest.approx(src, rel=0.51 * 10.0 ** (1 - digits)), key
    return len(shown)


def test_report_needs_an_html_file(cli_runner, app, tmp_path):
    res = cli_runner.invoke(app, ["report", str(SCREENED), "-o", str(tmp_path / "r.pdf")])
    assert_one_line_error(res, "--html", ".html")


def test_island_options_need_the_island(cli_runner, app, tmp_path):
    res = cli_runner.invoke(
        app, ["report", str(SCREENED), "-o", str(tmp_path / "r.html"), "--filling", "1/3"]
    )
    assert_one_line_error(res, "--island")


def test_one_d_review_is_self_contained_and_matches_its_json(cli_runner, app, tmp_path):
    out, js = tmp_path / "review.html", tmp_path / "review.json"
    res = cli_runner.invoke(
        app,
        ["report", str(SCREENED), "-o", str(out), "--json", str(js), "--step", "0.05"],
    )
    assert res.exit_code == 0, res.output
    html = out.read_text(encoding="utf-8")
    data = json.loads(js.read_text())
    # self-contained: no script, no external stylesheet, font or image
    assert "<script" not in html.lower()
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:)?//""", html)
    assert "@import" not in html and "url(http" not in html and "<link" not in html
    for sec in ("stack", "bands", "flags", "gate", "inputs"):
        assert f'<section id="{sec}">' in html
    assert '<section id="edge">' not in html and '<section id="island">' not in html
    # the stack file verbatim (HTML-escaped) and the version
    assert "QL-2417 screened well" in html and "thickness = &#34;24 nm&#34;" in html
    from qhdesign import __version__

    assert f"qhdesign {__version__}" in html
    shown = dict(re.findall(r'data-key="([^"]+)">([^<]+)<', html))
    assert "density.primary" in shown and "threshold.primary" in shown
    assert check_key_numbers(shown, data) >= 5
    # one badge per grower flag, each with a sentence
    flags = {b["flag"] for b in data["badges"]}
    assert {"primary well holds electrons", "parallel conduction", "tunnel coupling"} <= flags
    assert html.count('class="badge ') == len(data["badges"])


def _bands(primary_m2: float, e2: float = 0.02) -> dict:
    return {
        "wells": {
            "up": {"role": "screening", "sheet_density_m2": 2e15},
            "p": {"role": "primary", "sheet_density_m2": primary_m2},
        },
        "flags": {"E2_minus_EF_eV": e2, "second_subband_occupied": e2 < 0.002},
    }


def test_empty_primary_is_a_failing_badge():
    # the check can fail: an empty primary is "fail", a filled one "pass"
    empty = {
        b["flag"]: b["status"] for b in flag_badges(_bands(0.5 * EMPTY_PRIMARY_M2), None, None)
    }
    full = {b["flag"]: b["status"] for b in flag_badges(_bands(1e15), None, None)}
    assert empty["primary well holds electrons"] == "fail"
    assert full["primary well holds electrons"] == "pass"
    occupied = {b["flag"]: b["status"] for b in flag_badges(_bands(1e15, -0.001), None, None)}
    assert occupied["second subband of the primary"] == "fail"
    assert full["screening wells compressible"] == "n/a"  # no field: not evaluated


@pytest.mark.slow
def test_demo_review_in_a_real_browser(cli_runner, app, tmp_path):
    from cdp import Browser, find_chromium

    exe = find_chromium()
    if exe is None:
        pytest.fail(
            "chromium is not installed, so the design review cannot be checked in a browser: "
            "install it with `make browser` (as root: apt-get install -y chromium)"
        )
    out, js = tmp_path / "review.html", tmp_path / "review.json"
    res = cli_runner.invoke(
        app, ["report", str(SCREENED), *DEMO_ARGS, "-o", str(out), "--json", str(js)]
    )
    assert res.exit_code == 0, res.output
    data = json.loads(js.read_text())

    browser = Browser(exe, tmp_path / "profile")
    try:
        for domain in ("Page", "Runtime", "Log", "Network"):
            browser.call(f"{domain}.enable")
        browser.call("Page.navigate", url=out.as_uri())
        browser.wait_for("Page.loadEventFired")
        state = browser.evaluate("document.readyState")
        assert state == "complete"
        sections = browser.evaluate(
            "Array.from(document.querySelectorAll('section')).map(s => "
            "[s.id, s.getBoundingClientRect().height])"
        )
        figures = browser.evaluate(
            "Array.from(document.querySelectorAll('figure[data-figure]')).map(f => {"
            " const e = f.querySelector('svg, img'); const r = e.getBoundingClientRect();"
            " return [f.dataset.figure, r.width, r.height, e.tagName,"
            " e.tagName === 'IMG' ? (e.complete && e.naturalWidth) : 1]; })"
        )
        shown = dict(
            browser.evaluate(
                "Array.from(document.querySelectorAll('[data-key]')).map(e => "
                "[e.dataset.key, e.textContent])"
            )
        )
        metrics = browser.call("Page.getLayoutMetrics")
        size = metrics.get("cssContentSize") or metrics["contentSize"]
        width, height = math.ceil(size["width"]), math.ceil(size["height"])
        shot = browser.call(
            "Page.captureScreenshot",
            format="png",
            captureBeyondViewport=True,
            clip={"x": 0, "y": 0, "width": width, "height": height, "scale": 1},
        )
        errors = [
            e
            for e in browser.events
            if e["method"] == "Runtime.exceptionThrown"
            or (e["method"] == "Runtime.consoleAPICalled" and e["params"]["type"] == "error")
            or (e["method"] == "Log.entryAdded" and e["params"]["entry"]["level"] == "error")
        ]
        requests = [
            e["params"]["request"]["url"]
            for e in browser.events
            if e["method"] == "Network.requestWillBeSent"
        ]
    finally:
        browser.close()

    png = base64.b64decode(shot["data"])
    (tmp_path / "review.png").write_bytes(png)
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and len(png) > 10_000
    assert int.from_bytes(png[20:24], "big") >= height - 1  # the full page, not the viewport
    assert not errors, errors
    assert all(u.startswith(("file:", "data:")) for u in requests), requests
    assert dict(sections).keys() >= set(SECTIONS)
    assert all(h > 50 for _, h in sections), sections
    assert {f[0] for f in figures} == {"layers", "bands", "gate", "edge", "island"}
    for name, w, h, _tag, loaded in figures:
        assert w > 100 and h > 100 and loaded, (name, w, h, loaded)
    assert check_key_numbers(shown, data) >= 20
    for key in ("island.E_C_ueV", "island.E_C_mK", "electron_temperature_mK", "gate.window"):
        assert key in shown
    # E_C in mK is the same energy as E_C in ueV (k_B from CODATA, scipy)
    from scipy import constants as sc

    ec_mK = page_number(shown["island.E_C_ueV"]) * 1e-6 * sc.e / sc.k * 1e3
    assert ec_mK == pytest.approx(page_number(shown["island.E_C_mK"]), rel=2e-3)
