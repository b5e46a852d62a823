"""One self-contained HTML page for a solved plan (`strobeplan report`).

Rules the page keeps, each tested in a real browser (tests/test_report_html.py):

* self-contained: inline CSS, figures as inline SVG, no JavaScript, no external resource
  (no ``src=``/``href=`` to http, https, ``//`` or ``file``; the only links are ``#`` anchors);
* every user string (rig name, description, the rig text, messages) is escaped;
* several inline SVGs repeat matplotlib's ids (clip paths, hatches, markers), so every id
  and every reference to one is prefixed per figure;
* byte-identical when rebuilt from the same rig: ``svg.hashsalt`` is fixed, the SVG carries
  no date or metadata, and the page holds no time stamp.
"""

from __future__ import annotations

import html
import io
import json
import math
import re
from dataclasses import fields

from ..errors import RigError
from .text import CAUTION, caution_lines, label_and_value, section_rows

SVG_HASHSALT = "strobeplan"
PLOT_ORDER = ("timing", "pulse", "image", "thermal", "divider", "sweep", "tradeoff")
PLOT_TITLES = {
    "timing": "Timing: one frame and one drive period",
    "pulse": "Optical pulse and contrast retention",
    "thermal": "LED junction temperature over one frame",
    "divider": "Camera trigger divider: worst-case levels",
    "sweep": "Phase sweep: achieved against target",
    "tradeoff": "Design space: light per frame against retention",
    "image": "What the camera records: cutoff response and grey-level budget",
}
PLOT_HINTS = {
    "image": "The wave's peak deflection should stay inside the linear part of the response, "
             "the level between the too-dark line and the full well, and the wave's signal "
             "well above the noise (SNR 5 or more).",
    "timing": "The flash should sit where the wave at the view has the requested phase, and "
              "every flash of the burst inside the exposure.",
    "pulse": "Each marked harmonic of the wave should keep at least the retention target.",
    "thermal": "The peak of the steady state, not the mean, must stay below the junction "
               "limit with margin.",
    "divider": "The worst-case high band must lie above VIH and below the input maximum, the "
               "low band below VIL.",
    "sweep": "Achieved phases should lie on the diagonal, errors within half a tick.",
    "tradeoff": "Designs in the shaded region are safe and freeze the wave; the star is the "
                "brightest one (strobeplan tune).",
}
SCHEDULE_ROWS = 12

# Airborne-ultrasound guideline (1/3-octave band at the ear, occupational consensus at
# 25-50 kHz): Howard, Hansen & Zander (2004), J. Occup. Health Safety - Aust. NZ 21(3).
ULTRASOUND_GUIDELINE_DB = 110.0

CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,"DejaVu Sans",sans-serif;
 margin:0 auto;max-width:60rem;padding:1rem 1.5rem 3rem;color:#111;background:#fff;
 line-height:1.45}
h1{font-size:1.6rem;margin:.2rem 0}h2{font-size:1.25rem;border-bottom:2px solid #333;
 padding-bottom:.15rem;margin-top:2rem}h3{font-size:1.05rem;margin:1.2rem 0 .3rem}
.description{color:#333;margin:.2rem 0 .8rem}
.verdict{display:inline-block;font-weight:700;font-size:1.15rem;padding:.25rem .8rem;
 border:3px solid #111;border-radius:.3rem}
.verdict-fail{background:#fde2e2;border-style:double}.verdict-warn{background:#fff4d6;
 border-style:dashed}.verdict-pass{background:#e3f5e5}
table.glance{margin-top:.8rem}
nav ul{list-style:none;padding:0;display:flex;flex-wrap:wrap;gap:.4rem 1rem}
table{border-collapse:collapse;margin:.4rem 0;font-size:.92rem}
th,td{border:1px solid #bbb;padding:.2rem .5rem;text-align:left;vertical-align:top}
th{background:#eee}td.num{text-align:right;font-variant-numeric:tabular-nums;
 white-space:nowrap}
.sev{font-weight:700;text-transform:uppercase;white-space:nowrap}
.sev-hazard{background:#fbd0d0}.sev-fault{background:#fde2e2}.sev-warning{background:#fff4d6}
.sev-note{background:#eef}
code{font-family:ui-monospace,"DejaVu Sans Mono",monospace;font-size:.9em}
.fix{color:#222;font-style:italic}.see{font-size:.85rem}
.caution{border:2px solid #111;border-left-width:.6rem;padding:.4rem 1rem;background:#fafafa}
ul.called li{font-weight:600}
figure{margin:1rem 0;border:1px solid #ddd;padding:.5rem}
figure svg{width:100%;height:auto;display:block}
figcaption{font-size:.9rem;color:#333;margin-top:.3rem}
pre.rig{background:#f6f6f6;border:1px solid #ccc;padding:.6rem;white-space:pre-wrap;
 overflow-wrap:anywhere;
 font-size:.82rem;line-height:1.3}
.missing{color:#444}
footer{margin-top:2.5rem;font-size:.85rem;color:#444;border-top:1px solid #ccc}
@media print{figure{break-inside:avoid}}
"""


def _e(value) -> str:
    """Escaped text of any value (user strings included)."""
    return html.escape("" if value is None else str(value), quote=True)


# --- figures ------------------------------------------------------------------------------

# One pass over the SVG for its ids and the three ways it refers to one.
_REFS = re.compile(r'\b(id=")([^"]+)"|\b(href="#)([^"]+)"|(url\(#)([^)]+)\)')


def figure_svg(fig, prefix: str, label: str | None = None) -> str:
    """The figure as an inline ``<svg>`` element whose ids all start with ``prefix``.

    The XML prolog, the DOCTYPE and the metadata block are dropped (they name external
    URLs and the matplotlib version); the SVG's own ``*{...}`` style rule is scoped to this
    figure so it cannot touch the rest of the page.
    """
    import matplotlib

    buf = io.StringIO()
    # Text as SVG text in the figure's font (DejaVu Sans, then the browser's sans-serif),
    # not as glyph outlines: a third of the page's bytes and a tenth of the drawing time.
    with matplotlib.rc_context({"svg.hashsalt": SVG_HASHSALT, "svg.fonttype": "none"}):
        fig.savefig(buf, format="svg", metadata={"Date": None})
    svg = buf.getvalue()
    svg = svg[svg.index("<svg"):]
    start = svg.find("<metadata>")
    if start >= 0:
        end = svg.index("</metadata>", start) + len("</metadata>")
        svg = svg[:start].rstrip() + svg[end:]

    def prefixed(m):
        if m.group(1):
            return f'id="{prefix}-{m.group(2)}"'
        if m.group(3):
            return f'href="#{prefix}-{m.group(4)}"'
        return f"url(#{prefix}-{m.group(6)})"

    svg = _REFS.sub(prefixed, svg)
    aria = f' aria-label="{_e(label)}"' if label else ""
    svg = svg.replace("<svg ", f'<svg id="{prefix}" role="img"{aria} ', 1)
    svg = svg.replace("<style type=\"text/css\">*{", f'<style type="text/css">#{prefix} *{{', 1)
    return svg.strip()


def _figures(plan, kinds, tune_result=None
             ) -> tuple[list[tuple[str, str]], list[tuple[str, str]]]:
    """([(kind, svg)], [(kind, why not drawn)])."""
    from . import plots

    drawn, missing = [], []
    for kind in kinds:
        try:
            fig = plots.plot(plan, kind, tune_result=tune_result)
        except RigError as exc:
            missing.append((kind, str(exc)))
            continue
        drawn.append((kind, figure_svg(fig, f"fig-{kind}", PLOT_TITLES.get(kind, kind))))
    return drawn, missing


# --- pieces -------------------------------------------------------------------------------


def _section_rows(section) -> list[tuple[str, str]]:
    return section_rows(section)


def _section_table(name: str, section) -> str:
    rows = "".join(f"<tr><th scope=\"row\">{_e(label)}</th>"
                   f"<td class=\"num\">{_e(_micro(value))}</td></tr>"
                   for label, value in _section_rows(section))
    return (f'<h3 id="section-{_e(name)}">[{_e(name)}]</h3>\n'
            f"<table><tbody>{rows}</tbody></table>\n")


_UNIT_KINDS = {"s": "time", "A": "current", "V": "voltage", "W": "power", "J": "energy",
               "Hz": "frequency", "m": "length", "ohm": "resistance", "F": "capacitance"}
_MICRO = re.compile(r"(?<=\d) u(?=(?:s|F|A|V|W|J|H|C|m|Hz|\u03a9|ohm)\b)")


def _micro(text: str) -> str:
    """'178.3 us' -> '178.3 µs' (the text output keeps ASCII 'u'; the page is for people)."""
    return _MICRO.sub(" \N{MICRO SIGN}", text)


def _figure_value(value, unit) -> str:
    """A finding's value or limit with an SI prefix where its unit has one."""
    from ..units import render

    if value is None:
        return ""
    try:
        x = float(value)
    except (TypeError, ValueError):
        return _e(value)
    if unit in _UNIT_KINDS:
        return _e(_micro(render(x, _UNIT_KINDS[unit])))
    text = f"{x:.4g}"
    return _e(f"{text} {unit}" if unit and unit != "1" else text)


# (section, field, label) of the figures a practitioner looks at first.
GLANCE = (
    ("timing", "phase_achieved_deg", "phase at the view"),
    ("timing", "flashes_per_frame", "flashes per frame"),
    ("exposure", "retention", "contrast retention"),
    ("exposure", "blur_pixels", "blur [px]"),
    ("optics", "visible_contrast", "visible contrast"),
    ("led", "peak_current_a", "LED peak current"),
    ("led", "junction_peak_k", "junction peak"),
    ("led", "thermal_margin_k", "thermal margin"),
    ("stuck_on", "time_to_limit_s", "stuck gate: time to the junction limit"),
    ("trigger_link", "top_ohm", "trigger divider top"),
    ("trigger_link", "bottom_ohm", "trigger divider bottom"),
)


def _glance(plan) -> str:
    rows = []
    for section, name, label in GLANCE:
        sec = getattr(plan, section, None)
        if sec is None or not hasattr(sec, name):
            continue
        value = getattr(sec, name)
        if name in ("retention", "visible_contrast") and value is not None:
            shown = f"{value:.1%}"
        elif name == "blur_pixels" and value is not None:
            shown = f"{value:.3g}"
        elif name == "time_to_limit_s" and value is None:
            shown = "never reaches it"
        else:
            spec = next(f for f in fields(sec) if f.name == name)
            shown = label_and_value(spec, value)[1]
        rows.append(f'<tr><th scope="row">{_e(label)}</th><td class="num">{_e(_micro(shown))}'
                    "</td></tr>")
    if not rows:
        return ""
    return '<table class="glance"><tbody>' + "".join(rows) + "</tbody></table>\n"


def _findings(plan) -> str:
    if not plan.findings:
        return "<p>No findings: every check passed.</p>\n"
    rows = []
    present = {name for name, _section in plan.sections()}
    for f in plan.findings:
        fix = f'<div class="fix">fix: {_e(_micro(f.hint))}</div>' if f.hint else ""
        if f.subject in present:
            fix += (f'<div class="see"><a href="#section-{_e(f.subject)}">'
                    f"[{_e(f.subject)}] figures</a></div>")
        rows.append(
            f'<tr class="finding" id="finding-{_e(f.code)}">'
            f'<td class="sev sev-{_e(f.severity)}">{_e(f.severity)}</td>'
            f"<td><code>{_e(f.code)}</code></td>"
            f"<td>{_e(_micro(f.message))}{fix}</td>"
            f'<td class="num">{_figure_value(f.value, f.unit)}</td>'
            f'<td class="num">{_figure_value(f.limit, f.unit)}</td></tr>')
    counts = {}
    for f in plan.findings:
        counts[f.severity] = counts.get(f.severity, 0) + 1
    summary = ", ".join(f"{n} {s}" for s, n in counts.items())
    return (f"<p>{len(plan.findings)} findings ({_e(summary)}).</p>\n"
            "<table><thead><tr><th>severity</th><th>code</th><th>what and how to fix it</th>"
            "<th>value</th><th>limit</th></tr></thead><tbody>\n"
            + "\n".join(rows) + "\n</tbody></table>\n")


def _eye_figure(plan) -> str:
    """The computed IEC 62471 estimate for the source image at the cutoff, as a sentence."""
    from ..units import render

    eye = plan.eye
    if eye is None:
        return ""
    t = eye.time_to_limit_s
    when = (f"reaches the {_e(eye.limited_by)} limit after "
            f"{_e(_micro(render(t, 'time')))}" if t is not None and math.isfinite(t)
            else "reaches no limit")
    return (f" Here, looking into the source image at the cutoff {when} (time-averaged over "
            f"the flash pattern; IEC 62471 risk group {eye.risk_group}); an estimate, not a "
            "certification.")


def _cautions(plan) -> str:
    from ..units import render

    rig = plan.rig
    items = [
        "<li><strong>Eyes.</strong> An LED overdriven to several times its rated current "
        "gives short flashes bright enough to injure eyes, and a schlieren system focuses "
        "the source to a point. Never look into the LED, the source image or the beam; "
        "enclose the light path and assess the source against the photobiological safety "
        "standard that applies to you (e.g. IEC 62471)." + _eye_figure(plan) + "</li>",
    ]
    charge = "<li><strong>Stored charge.</strong> Storage capacitors stay charged after the " \
             "supply is switched off."
    if plan.supply is not None:
        energy = plan.supply.stored_energy_j
        charge += (f" This rig stores {_e(render(energy, 'energy'))} in "
                   f"{_e(_micro(render(rig.supply.storage_capacitance, 'capacitance')))} at "
                   f"{_e(render(plan.design.supply_voltage, 'voltage'))}.")
    charge += " Fit a bleeder, discharge and measure before touching the power stage.</li>"
    items.append(charge)
    sound = ("<li><strong>Ultrasound.</strong> Airborne ultrasound at the levels used for "
             "imaging and levitation can harm hearing and cause headache or nausea, although it "
             "is inaudible. Occupational guideline levels are about "
             f"{ULTRASOUND_GUIDELINE_DB:.0f} dB (1/3-octave band, 25&ndash;50 kHz; Howard, "
             "Hansen &amp; Zander 2004); local rules decide.")
    spl = getattr(plan.optics, "spl_at_view_db", None) if plan.optics is not None else None
    if spl is not None:
        sound += f" The plan puts {_e(f'{spl:.4g}')} dB at the view."
    sound += " Keep people out of the near field and use shielding or hearing protection.</li>"
    items.append(sound)
    hot = ("<li><strong>Hot parts.</strong> The LED, the MOSFET and the series resistor get "
           "hot, and a gate stuck on turns the storage capacitor into a short-circuit source.")
    stuck = plan.stuck_on
    t_lim = getattr(stuck, "time_to_limit_s", None) if stuck is not None else None
    if t_lim is not None:
        hot += (f" With the gate stuck on, the LED reaches its junction limit after "
                f"{_e(_micro(render(t_lim, 'time')))}.")
    hot += " Fuse the supply, limit the recharge current and let parts cool before handling.</li>"
    items.append(hot)
    items.append("<li>Follow the datasheets, local codes and licensed practice; where a "
                 "datasheet and strobeplan disagree, the datasheet rules.</li>")
    called = [c for c in caution_lines(plan) if c != CAUTION]
    flagged = ""
    if called:
        flagged = ('<p><strong>This plan\'s findings call for:</strong></p>\n<ul class="called">'
                   + "".join(f"<li>{_e(c)}</li>" for c in called) + "</ul>\n")
    return (f'<div class="caution">{flagged}<p>{_e(CAUTION)}</p>\n<ul>\n' + "\n".join(items)
            + "\n</ul></div>\n")


def _schedule(plan) -> str:
    from ..solve import build_schedule
    from ..units import render

    try:
        sched = build_schedule(plan)
    except RigError as exc:
        return f'<p class="missing">No schedule: {_e(exc)}</p>\n'
    head = ("<tr><th>frame</th><th>target</th><th>achieved</th><th>error</th>"
            "<th>edge [ticks]</th><th>edge</th><th>camera trigger [ticks]</th>"
            "<th>first flash [ticks]</th><th>flashes</th></tr>")
    rows = []
    for r in sched.rows[:SCHEDULE_ROWS]:
        cells = [str(r.frame), f"{r.target_phase_deg:.3f} deg", f"{r.achieved_phase_deg:.3f} deg",
                 f"{r.phase_error_deg:.4f} deg", str(r.edge_ticks),
                 _micro(render(r.edge_time_s, "time")), str(r.camera_trigger_ticks),
                 "" if r.first_flash_ticks is None else str(r.first_flash_ticks),
                 "" if r.flashes is None else str(r.flashes)]
        rows.append("<tr>" + "".join(f'<td class="num">{_e(c)}</td>' for c in cells) + "</tr>")
    more = len(sched.rows) - SCHEDULE_ROWS
    note = (f"<p>{more} more rows: <code>strobeplan schedule RIG</code> exports them all.</p>\n"
            if more > 0 else "")
    return (f"<p>Mode {_e(sched.mode)}; clock {_e(render(sched.clock_hz, 'frequency'))}; drive "
            f"period {sched.drive_period_ticks} ticks; flash period {sched.flash_period_ticks} "
            f"ticks; frame period {_e(sched.frame_period_ticks or 'n/a')} ticks.</p>\n"
            f"<table><thead>{head}</thead><tbody>\n" + "\n".join(rows)
            + "\n</tbody></table>\n" + note)


def _rig_text(plan, rig_text: str | None) -> str:
    if rig_text is not None:
        return ("<p>The rig file exactly as given:</p>\n"
                f'<pre class="rig">{_e(rig_text)}</pre>\n')
    dumped = json.dumps(plan.rig.model_dump(mode="json"), indent=2, sort_keys=True,
                        ensure_ascii=False)
    return ("<p>The validated rig (the source text was not given; values in SI units):</p>\n"
            f'<pre class="rig">{_e(dumped)}</pre>\n')


# --- page ---------------------------------------------------------------------------------


PREVIEW_PIXELS = 256  # the report's contact sheet: at most this many pixels across a frame
PREVIEW_FRAMES = 12   # and this many frames over the sweep
PREVIEW_SECONDS = 3.0  # the report draws no preview whose estimate is longer


def preview_html(plan) -> str:
    """A reduced preview's contact sheet, embedded as a PNG data URI (or why it is missing)."""
    import base64

    from ..errors import StrobeplanError
    from ..preview import _png_bytes, contact_sheet, render_preview

    if plan.rig.emitter is None or plan.timing is None:
        return '<p class="missing">No preview: the rig has no emitter.</p>'
    try:
        pv = render_preview(plan.rig, plan, frames=PREVIEW_FRAMES, noise=False,
                            max_pixels=PREVIEW_PIXELS, max_seconds=PREVIEW_SECONDS)
    except StrobeplanError as exc:
        return f'<p class="missing">No preview: {_e(str(exc))}</p>'
    sheet = contact_sheet(pv, tile=min(PREVIEW_PIXELS, pv.grid.nx))
    # zlib level 4: 10 % larger than level 6 and a third of its time (9: 15 x slower)
    png = base64.b64encode(_png_bytes(sheet, level=4)).decode()
    s = pv.summary
    notes = "".join(f"<li>{_e(f.code)}: {_e(f.message)}</li>" for f in pv.findings)
    return (f'<figure id="preview-sheet"><img alt="synthetic schlieren frames over the sweep" '
            f'src="data:image/png;base64,{png}">'
            f"<figcaption><strong>Synthetic frames.</strong> {s['frames']} frames over the "
            f"sweep, {s['width_px']} x {s['height_px']} px of "
            f"{s['pixel_m'] * 1e3:.3g} mm (reduced, mean grey levels without noise), phase "
            f"labels in degrees; peak "
            f"{s['peak_pressure_pa']:.4g} Pa, deflection {s['peak_deflection_rad']:.3g} rad, "
            f"grey levels {s['grey_min']}..{s['grey_max']} "
            f"(<code>strobeplan preview RIG -o DIR</code> draws them at full size)"
            "</figcaption></figure>" + (f'<ul class="missing">{notes}</ul>' if notes else ""))


def report_html(plan, rig_text: str | None = None, plots=PLOT_ORDER, tune_result=None,
                measured=None, preview=None) -> str:
    """The whole report as one self-contained HTML page.

    Parameters
    ----------
    plan : Plan
        A solved plan (``strobeplan.solve``).
    rig_text : str, optional
        The rig file's text, shown as given; without it the validated rig is re-dumped.
    plots : sequence of str, optional
        Which plots to draw, in order (a plot whose inputs the plan lacks is listed with
        the reason instead).
    tune_result : strobeplan.tune.TuneResult or callable, optional
        The design search of the rig, for the trade-off plot; or a function returning it
        (:func:`strobeplan.background.start`), called once the figures that do not need
        it and the preview are drawn (the search may run in another process meanwhile).
    measured : strobeplan.analyse.Analysis, optional
        Captured frames analysed (``report --frames``): a "Measured against planned"
        section (strobeplan/report/measured.py).
    preview : str or callable, optional
        The preview section's HTML (:func:`preview_html` of the same plan), or a function
        returning it, called once the figures that do not need the search are drawn (it
        may be computed in another process meanwhile); default: computed here.

    Returns
    -------
    str
        The page; the same plan and text always give the same bytes.
    """
    from .. import __version__

    rig = plan.rig
    verdict = plan.verdict
    # The search's figure last: the others and the preview do not wait for it.
    searched = [k for k in plots if k == "tradeoff"]
    drawn, missing = _figures(plan, [k for k in plots if k not in searched])
    if preview is None:
        preview = preview_html(plan)
    elif callable(preview):
        preview = preview()
    if searched:
        result = tune_result() if callable(tune_result) else tune_result
        more, why = _figures(plan, searched, result)
        order = {k: i for i, k in enumerate(plots)}
        drawn = sorted(drawn + more, key=lambda kv: order[kv[0]])
        missing = sorted(missing + why, key=lambda kv: order[kv[0]])
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>strobeplan report: {_e(rig.name)}</title>",
        f"<style>{CSS}</style>",
        "</head>",
        "<body>",
        "<header>",
        f"<h1>strobeplan report: {_e(rig.name)}</h1>",
        f'<p class="description">{_e(rig.description)}</p>' if rig.description else "",
        f'<p><span class="verdict verdict-{_e(verdict)}" id="verdict">verdict: '
        f"{_e(verdict.upper())}</span></p>",
        _glance(plan),
        "</header>",
        '<nav aria-label="contents"><ul>'
        '<li><a href="#findings">Findings</a></li><li><a href="#cautions">Safety</a></li>'
        '<li><a href="#plots">Plots</a></li><li><a href="#preview">Preview</a></li>'
        '<li><a href="#plan">Plan</a></li>'
        + ('<li><a href="#measured">Measured</a></li>' if measured is not None else "")
        + '<li><a href="#schedule">Schedule</a></li><li><a href="#rig">Rig file</a></li>'
        "</ul></nav>",
        '<section id="findings"><h2>Findings</h2>',
        _findings(plan),
        "</section>",
        '<section id="cautions"><h2>Safety cautions</h2>',
        _cautions(plan),
        "</section>",
        '<section id="plots"><h2>Plots</h2>',
    ]
    for kind, svg in drawn:
        parts.append(f'<figure id="plot-{kind}">{svg}\n'
                     f"<figcaption><strong>{_e(PLOT_TITLES.get(kind, kind))}.</strong> "
                     f"{_e(PLOT_HINTS.get(kind, ''))} "
                     f"(<code>strobeplan plot RIG --kind {kind}</code>)</figcaption></figure>")
    if missing:
        parts.append('<p class="missing">Not drawn:</p><ul class="missing">'
                     + "".join(f"<li>{_e(k)}: {_e(why)}</li>" for k, why in missing)
                     + "</ul>")
    parts += ["</section>", '<section id="preview"><h2>Preview</h2>', preview,
              "</section>", '<section id="plan"><h2>Plan</h2>']
    parts += [_section_table(name, section) for name, section in plan.sections()]
    if measured is not None:
        from .measured import measured_html

        parts += ["</section>", '<section id="measured"><h2>Measured against planned</h2>',
                  measured_html(measured)]
    parts += ["</section>", '<section id="schedule"><h2>Schedule (first rows)</h2>',
              _schedule(plan), "</section>",
              '<section id="rig"><h2>Rig file</h2>', _rig_text(plan, rig_text), "</section>",
              f"<footer><p>strobeplan {_e(__version__)}: a planning aid, not a safety "
              "certification.</p></footer>",
              "</body>", "</html>"]
    return "\n".join(p for p in parts if p) + "\n"
