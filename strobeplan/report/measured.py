"""The report's "Measured against planned" section: what ``analyse`` found in captured frames
set beside the plan's figures (each measured figure with its uncertainty)."""

from __future__ import annotations

from .html import _e


def _fmt(value, digits=5, scale=1.0, unit=""):
    if value is None:
        return "n/a"
    return f"{value * scale:.{digits}g}{(' ' + unit) if unit else ''}"


def _pm(value, sigma, digits=5, scale=1.0, unit=""):
    if value is None:
        return "n/a"
    text = f"{value * scale:.{digits}g}"
    if sigma is not None:
        text += f" \N{PLUS-MINUS SIGN} {sigma * scale:.2g}"
    return text + (f" {unit}" if unit else "")


def measured_rows(summary: dict) -> list[tuple[str, str, str]]:
    """(quantity, measured, planned) rows of an analyse summary."""
    rows = []
    w = summary.get("wave")
    if w:
        rows += [
            ("wave", f"{w['kind']} ({w['method']})", ""),
            ("wavelength", _pm(w["wavelength_m"], w["wavelength_uncertainty_m"], 5, 1e3, "mm"),
             _fmt(w["planned_wavelength_m"], 5, 1e3, "mm")),
            ("speed of sound", _pm(w["speed_of_sound_m_s"], w["speed_of_sound_uncertainty_m_s"],
                                   5, 1, "m/s"),
             _fmt(w["planned_speed_of_sound_m_s"], 5, 1, "m/s")),
            ("air temperature", _pm(w["air_temperature_c"], w["air_temperature_uncertainty_k"],
                                    3, 1, "degC"),
             _fmt(w["planned_air_temperature_c"], 3, 1, "degC")),
        ]
    v = summary.get("view")
    if v and "measured_phase_deg" in v:
        rows.append(("phase at the view (frame 0)",
                     _pm(v["measured_phase_deg"], v["phase_uncertainty_deg"], 5, 1, "deg"),
                     _fmt(v["planned_phase_deg"], 5, 1, "deg")))
    c = summary.get("calibration")
    if c:
        rows.append(("strobe.calibration_offset",
                     _pm(c["offset_s"], c["uncertainty_s"], 5, 1e9, "ns"),
                     _fmt(c["rig_offset_s"], 5, 1e9, "ns")))
    p = summary.get("pressure")
    if p:
        rows.append(("pressure amplitude at the view (plane wave)",
                     _pm(p["plane_wave_at_view_pa"], p["plane_wave_uncertainty_pa"], 4, 1, "Pa"),
                     _fmt(p.get("planned_at_view_pa"), 4, 1, "Pa")))
        if p.get("abel_at_view_pa") is not None:
            rows.append(("pressure amplitude at the view (Abel)",
                         _pm(p["abel_at_view_pa"], p["abel_uncertainty_pa"], 4, 1, "Pa"),
                         _fmt(p.get("planned_at_view_pa"), 4, 1, "Pa")))
    return rows


def measured_html(analysis) -> str:
    """The section's HTML (figures as inline SVG through the report's id-prefixing)."""
    from .html import figure_svg

    s = analysis.summary
    f = s["frames"]
    parts = [f"<p>{f['count']} frames of {f['width_px']} &times; {f['height_px']} pixels, "
             f"{f['bit_depth']}-bit ({_e(f['colour'])}); phases from {_e(f['phases_from'])}. "
             "Uncertainties are one standard deviation from the frames' own noise.</p>"]
    rows = "".join(f'<tr><th scope="row">{_e(q)}</th><td class="num">{_e(m)}</td>'
                   f'<td class="num">{_e(p)}</td></tr>' for q, m, p in measured_rows(s))
    parts.append("<table><thead><tr><th>quantity</th><th>measured</th><th>planned</th></tr>"
                 f"</thead><tbody>{rows}</tbody></table>")
    if s["findings"]:
        parts.append("<ul>" + "".join(f"<li><code>{_e(x['code'])}</code> ({_e(x['severity'])}"
                                      f"): {_e(x['message'])}</li>" for x in s["findings"])
                     + "</ul>")
    if s["notes"]:
        parts.append('<ul class="missing">' + "".join(f"<li>{_e(n)}</li>" for n in s["notes"])
                     + "</ul>")
    from ..analyse import map_figure

    for which in ("amplitude", "phase"):
        fig = map_figure(analysis, which)
        parts.append(f'<figure id="measured-{which}">'
                     f"{figure_svg(fig, f'fig-measured-{which}', f'measured {which} map')}"
                     f"<figcaption>Measured {which} map (<code>strobeplan analyse</code>); the "
                     "red cross is the view point.</figcaption></figure>")
    return "\n".join(parts) + "\n"
