"""The HTML report in a real browser: headless Chromium (Debian package chromium).

The page must be self-contained (no external resource, no script), escape every user
string, carry every finding code and the plots as inline SVG, render to a non-blank
screenshot, and rebuild byte for byte. Without Chromium the browser tests fail with one line
naming the package to install (tests/conftest.py ``need_program``).
"""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import numpy as np
import pytest

from strobeplan.report.html import report_html
from strobeplan.rig import load_rig, loads_rig
from strobeplan.solve import solve
from tests.conftest import example, need_program, run_cli

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--hide-scrollbars"]

EVIL = """
name = "<script>alert('x')</script> & co"
description = "a \\"quoted\\" <b>bold</b> claim"
[wave]
frequency = "40 kHz"
[controller]
clock = "100 MHz"
[strobe]
pulse_width = "1 us"
phase = "45 deg"
# </pre><script>alert(2)</script>
"""

EXTERNAL = re.compile(r"""(?:src|href)\s*=\s*["']?\s*(?:https?:|//|file:)""", re.I)


def chromium(tmp_path: Path, *args: str) -> subprocess.CompletedProcess:
    exe = need_program("chromium", "chromium")
    profile = tmp_path / f"profile-{len(list(tmp_path.iterdir()))}"
    profile.mkdir()
    return subprocess.run([exe, *FLAGS, f"--user-data-dir={profile}", *args],
                          capture_output=True, text=True, timeout=120, check=True)


def dump_dom(tmp_path: Path, page: Path) -> str:
    return chromium(tmp_path, "--dump-dom", page.as_uri()).stdout


@pytest.fixture(scope="module")
def pages(tmp_path_factory):
    """Reports written by the CLI: {name: (path, plan)}."""
    out = tmp_path_factory.mktemp("reports")
    built = {}
    for name in ("levitator-40k", "unsafe-bench"):
        path = out / f"{name}.html"
        r = run_cli("report", example(name), "-o", path)
        assert r.exit_code == 0, r.output
        built[name] = (path, solve(load_rig(example(name))))
    return built


@pytest.mark.slow
def test_dom_holds_every_finding_code_and_the_plots(pages, tmp_path):
    for name, (path, plan) in pages.items():
        dom = dump_dom(tmp_path, path)
        codes = {f.code for f in plan.findings}
        if name == "unsafe-bench":  # the deliberately bad rig must trip hazards (README.md)
            assert any(f.severity == "hazard" for f in plan.findings)
        for code in codes:
            assert code in dom, (name, code)
        assert dom.count("<svg") >= 4, name
        assert f"verdict: {plan.verdict.upper()}" in dom
        assert "Safety cautions" in dom


@pytest.mark.slow
def test_screenshot_is_not_blank(pages, tmp_path):
    from matplotlib.image import imread

    shot = tmp_path / "shot.png"
    chromium(tmp_path, f"--screenshot={shot}", "--window-size=1200,2400",
             pages["levitator-40k"][0].as_uri())
    pixels = imread(shot)[..., :3]
    grey = pixels.mean(axis=2)
    assert grey.shape == (2400, 1200)
    assert float(np.var(grey)) > 1e-3  # a blank page has zero variance
    assert float((grey < 0.5).mean()) > 0.005  # text and figure lines: dark pixels
    # the figures reached the screen: some rows far down the page are not white either
    assert float((grey[1200:] < 0.9).mean()) > 0.005


@pytest.mark.slow
def test_self_contained(pages):
    for name, (path, _plan) in pages.items():
        text = path.read_text(encoding="utf-8")
        assert not EXTERNAL.findall(text), name
        assert "<script" not in text.lower()
        assert "@import" not in text and "url(http" not in text
        assert "<!DOCTYPE svg" not in text and "<?xml" not in text


@pytest.mark.slow
def test_ids_are_unique_and_references_resolve(pages):
    text = pages["levitator-40k"][0].read_text(encoding="utf-8")
    ids = re.findall(r'\bid="([^"]+)"', text)
    assert len(ids) == len(set(ids))
    refs = set(re.findall(r'href="#([^"]+)"', text)) | set(re.findall(r"url\(#([^)]+)\)", text))
    assert refs and refs <= set(ids)
    for kind in ("timing", "pulse", "thermal", "divider", "sweep", "tradeoff"):
        assert f'<svg id="fig-{kind}" role="img" aria-label=' in text


@pytest.mark.slow
def test_tables_rig_text_and_cautions(pages):
    path, plan = pages["levitator-40k"]
    text = path.read_text(encoding="utf-8")
    for name, _section in plan.sections():
        assert f'id="section-{name}"' in text
    # 100 MHz clock: one tick is 10 ns; 40 kHz over 2500 ticks [calc]
    assert "<td class=\"num\">10 ns</td>" in text
    assert "\N{MICRO SIGN}s" in text  # SI prefixes on the page
    # the rig as given, comments included
    first_comment = example("levitator-40k").read_text(encoding="utf-8").splitlines()[0]
    assert first_comment.replace("&", "&amp;") in text
    caution = text[text.index('id="cautions"'):text.index('id="plots"')]
    for word in ("eyes", "charge", "ultrasound", "hot", "datasheets", "local codes",
                 "licensed practice"):
        assert word in caution.lower(), word
    # stored energy of 470 uF at 24 V: 0.5 C V^2 = 135.4 mJ [calc]
    assert "135.4 mJ" in caution
    assert "Schedule (first rows)" in text and "<td class=\"num\">0</td>" in text


@pytest.mark.slow
def test_user_strings_stay_escaped(tmp_path):
    rig_file = tmp_path / "evil.toml"
    rig_file.write_text(EVIL, encoding="utf-8")
    page = tmp_path / "evil.html"
    assert run_cli("report", rig_file, "-o", page).exit_code == 0
    text = page.read_text(encoding="utf-8")
    assert "<script" not in text.lower() and "<b>bold" not in text
    assert "&lt;script&gt;alert(&#x27;x&#x27;)&lt;/script&gt; &amp; co" in text
    assert "&lt;/pre&gt;&lt;script&gt;alert(2)" in text
    dom = dump_dom(tmp_path, page)
    assert "<script" not in dom.lower()
    assert "&lt;script&gt;" in dom  # still text after the browser parsed it
    # plots whose inputs this rig lacks are listed, not drawn
    assert "Not drawn" in text and "thermal: led" in text


@pytest.mark.slow
def test_byte_identical_rebuild(pages):
    from strobeplan.tune import tune

    path, plan = pages["unsafe-bench"]
    again = report_html(plan, rig_text=example("unsafe-bench").read_text(encoding="utf-8"),
                        tune_result=tune(plan.rig))
    assert again.encode("utf-8") == path.read_bytes()


def test_rig_redumped_without_its_text():
    plan = solve(loads_rig(EVIL))
    page = report_html(plan, plots=("sweep",))
    assert "validated rig" in page and "&quot;pulse_width&quot;: 1e-06" in page
    assert page.count("<svg") == 1


def test_report_bad_input_exits_2(tmp_path):
    r = run_cli("report", tmp_path / "missing.toml", "-o", tmp_path / "r.html")
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert not (tmp_path / "r.html").exists()


@pytest.mark.slow
def test_cautions_the_findings_call_for(pages):
    import html

    from strobeplan.report.text import caution_lines

    path, plan = pages["unsafe-bench"]
    text = path.read_text(encoding="utf-8")
    caution = text[text.index('id="cautions"'):text.index('id="plots"')]
    called = caution_lines(plan)
    assert len(called) >= 3  # the bad bench trips LED, stuck-on and ultrasound concerns
    for line in called:
        assert html.escape(line, quote=True) in caution
    # the rig's own figures: 0.5 x 1 mF x (24 V)^2 = 288 mJ [calc]; stuck-on time from the plan
    assert "288 mJ" in caution and "\N{MICRO SIGN}s" in caution


@pytest.mark.slow
def test_key_figures_at_the_top(pages):
    path, plan = pages["levitator-40k"]
    text = path.read_text(encoding="utf-8")
    head = text[:text.index("</header>")]
    assert 'class="glance"' in head
    assert f"{plan.exposure.retention:.1%}" in head
    assert f"<td class=\"num\">{plan.timing.flashes_per_frame}</td>" in head
    from strobeplan.units import render

    assert render(plan.trigger_link.top_ohm, "resistance") in head  # the proposed divider


def test_micro_prefix_only_on_units():
    from strobeplan.report.html import _micro

    assert _micro("at most 1.154 us keeps 470 uF and 2.5 uA") == \
        "at most 1.154 \N{MICRO SIGN}s keeps 470 \N{MICRO SIGN}F and 2.5 \N{MICRO SIGN}A"
    assert _micro("5 units, 3 uses") == "5 units, 3 uses"


FAMILY = """
name = "family"
[wave]
frequency = "40 kHz"
[controller]
clock = "100 MHz"
[strobe]
pulse_width = "1 us"
[camera]
exposure = "1 ms"
frame_rate = "50 Hz"
trigger_input = { family = "--><script>alert(1)</script><!--" }
[trigger_link]
series = "E24"
tolerance = "1 %"
[trigger_link.families."--><script>alert(1)</script><!--"]
vdd = "1.8 V"
vih = "1.2 V"
vil = "0.6 V"
voh = "1.4 V"
vol = "0.4 V"
output_current = "2 mA"
"""


def test_user_strings_inside_figures_stay_escaped():
    """A custom family name reaches the divider plot's title, hence the SVG (whose text
    matplotlib also writes as comments): it must not close a comment or open a script."""
    page = report_html(solve(loads_rig(FAMILY)), rig_text=FAMILY)
    assert '<svg id="fig-divider"' in page
    assert "<script" not in page.lower()
    svg = page[page.index('<svg id="fig-divider"'):]
    assert "&lt;script&gt;" in svg[:svg.index("</svg>")]
