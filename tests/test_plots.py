"""Plots: each returns a Figure with the expected artists, labels and axis units.

Assertions are on artists (lines, collections, labels, formatters), never on pixels. Check
values come from outside the plots: the temporal MTF of a rectangular flash (|sinc|,
Boreman 2001), the exact Foster pulse-train peak of docs/references.md, "Power stage",
JEDEC JESD8-7A levels, and the tick arithmetic of the rig.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from matplotlib.colors import to_rgba
from matplotlib.figure import Figure
from matplotlib.ticker import EngFormatter, PercentFormatter

from strobeplan.errors import RigError
from strobeplan.report import plots
from strobeplan.rig import load_rig, loads_rig
from strobeplan.solve import solve
from strobeplan.stages import traces
from tests.conftest import example, run_cli

BASE = """
name = "plain"
[wave]
frequency = "40 kHz"
harmonics = {harmonics}
[controller]
clock = "100 MHz"
[strobe]
pulse_width = "{width}"
phase = "{phase}"
"""

# A continuous train (no camera) of 10 us pulses every 1 ms (every = 40 at 40 kHz) into the
# four-term Foster network of docs/references.md, "Power stage".
FOSTER = """
name = "foster"
[wave]
frequency = "40 kHz"
[controller]
clock = "100 MHz"
[strobe]
pulse_width = "10 us"
every = 40
[led]
forward_voltage = [{ current = "1 A", voltage = "3.0 V" }]
max_dc_current = "1 A"
junction_max = "150 degC"
thermal = [
  { resistance = "0.05 K/W", time_constant = "10 us" },
  { resistance = "0.2 K/W", time_constant = "100 us" },
  { resistance = "0.5 K/W", time_constant = "1 ms" },
  { resistance = "0.25 K/W", time_constant = "10 ms" },
]
[supply]
voltage = "12 V"
series_resistor = "3 ohm"
series_resistor_power = "5 W"
storage_capacitance = "1000 uF"
max_current = "1 A"
max_power = "20 W"
"""


def plain(width="1 us", phase="90 deg", harmonics=1):
    return solve(loads_rig(BASE.format(width=width, phase=phase, harmonics=harmonics)))


@pytest.fixture(scope="module")
def levitator():
    return solve(load_rig(example("levitator-40k")))


@pytest.fixture(scope="module")
def unsafe():
    return solve(load_rig(example("unsafe-bench")))


def labelled(ax, prefix):
    """The artists of an Axes whose label starts with ``prefix``."""
    artists = list(ax.lines) + list(ax.collections) + list(ax.patches)
    return [a for a in artists if str(a.get_label()).startswith(prefix)]


def one(ax, prefix):
    found = labelled(ax, prefix)
    assert len(found) == 1, (prefix, [a.get_label() for a in ax.lines + ax.collections])
    return found[0]


# --- generic properties of every plot -------------------------------------------------------


def _axis_has_unit(axis) -> bool:
    fmt = axis.get_major_formatter()
    if isinstance(fmt, EngFormatter):
        return bool(fmt.unit)
    if isinstance(fmt, PercentFormatter):
        return True
    labels = [t.get_text() for t in axis.get_ticklabels()]
    if labels and all(lab and not lab.lstrip("-\N{MINUS SIGN}")[:1].isdigit()
                      for lab in labels):
        return True  # named lanes or rows ("flashes", "exposure"; "low", "high")
    return "[" in axis.get_label_text() and "]" in axis.get_label_text()


def _grey(color) -> bool:
    r, g, b, _ = to_rgba(color)
    return abs(r - g) < 1e-9 and abs(g - b) < 1e-9


@pytest.fixture(scope="module")
def all_figures(levitator, unsafe):
    from strobeplan.tune import tune

    figs = {kind: plots.plot(levitator, kind) for kind in plots.KINDS if kind != "tradeoff"}
    figs["thermal-unsafe"] = plots.plot(unsafe, "thermal")
    figs["divider-unsafe"] = plots.plot(unsafe, "divider")
    figs["tradeoff"] = plots.plot_tradeoff(levitator, result=tune(levitator.rig))
    return figs


def test_every_kind_returns_a_figure(all_figures):
    assert set(plots.KINDS) <= set(all_figures)
    for fig in all_figures.values():
        assert isinstance(fig, Figure)
        assert fig.axes and all(ax.get_title() for ax in fig.axes)


def test_every_axis_carries_a_unit(all_figures):
    for kind, fig in all_figures.items():
        for ax in fig.axes:
            assert _axis_has_unit(ax.xaxis), (kind, ax.get_xlabel())
            ylab = ax.get_ylabel()
            assert _axis_has_unit(ax.yaxis) or not ax.get_yticks().size, (kind, ylab)


def test_readable_in_greyscale(all_figures):
    """Colours are greys only; labelled lines of one Axes differ by dash, width or marker
    (shape or fill), not by colour alone."""
    for kind, fig in all_figures.items():
        for ax in fig.axes:
            styles = []
            for line in ax.lines:
                assert _grey(line.get_color()), (kind, line.get_label())
                if not line.get_label().startswith("_"):
                    face = line.get_markerfacecolor()
                    styles.append((line.get_linestyle(), line.get_marker(),
                                   line.get_linewidth(), to_rgba(face) == to_rgba("white")))
            assert len(styles) == len(set(styles)), (kind, ax.get_title())
            for coll in ax.collections:
                for c in list(coll.get_facecolors()) + list(coll.get_edgecolors()):
                    assert _grey(c), (kind, coll.get_label())


# --- timing ---------------------------------------------------------------------------------


def test_timing_flash_sits_on_the_requested_crest(levitator):
    fig = plots.plot_timing(levitator)
    frame, zoom = fig.axes
    t = levitator.timing
    # 100 MHz / 40 kHz = 2500 ticks of 10 ns: one drive period is 25 us [calc].
    lo, hi = zoom.get_xlim()
    assert hi - lo == pytest.approx(25e-6, rel=1e-9)
    assert isinstance(zoom.xaxis.get_major_formatter(), EngFormatter)
    assert zoom.xaxis.get_major_formatter().unit == "s"
    one(zoom, "drive at the controller")
    wave = one(zoom, "wave at the view")
    requested = one(zoom, "requested phase 90")
    centroid = one(zoom, "optical centroid")
    x_req = requested.get_xdata()[0]
    # A sine wave crests at 90 deg: the wave's maximum is where the requested line is.
    x, y = wave.get_xdata(), wave.get_ydata()
    assert x[np.argmax(y)] == pytest.approx(x_req, abs=2 * (x[1] - x[0]))
    # The optical centroid lands within half a tick (5 ns) of the requested time.
    assert abs(centroid.get_xdata()[0] - x_req) <= 0.5 * t.tick_s + 1e-12
    assert centroid.get_ydata()[0] == pytest.approx(1.0, abs=1e-3)
    assert "chain delay" in wave.get_label()


def test_timing_frame_holds_the_burst(levitator):
    frame = plots.plot_timing(levitator).axes[0]
    flashes = one(frame, "flashes in the exposure")
    starts = np.array([seg[0][0] for seg in flashes.get_segments()])
    # 1 ms exposure opened at a flash, flashes every 25 us, light L < 25 us:
    # floor((1 ms - L)/25 us) + 1 = 40 [calc]
    assert starts.size == 40 == levitator.timing.flashes_per_frame
    assert np.allclose(np.diff(starts), 25e-6, rtol=0, atol=1e-12)
    bar = one(frame, "camera exposure")
    xs = bar.get_paths()[0].vertices[:, 0]
    x0, width = xs.min(), np.ptp(xs)
    assert width == pytest.approx(1e-3)
    light = levitator.flash.light_length_s
    assert starts.min() >= x0 and starts.max() + light <= x0 + width + 1e-12
    labels = [t.get_text() for t in frame.get_yticklabels()]
    assert labels == ["flashes", "exposure"]
    # the exposure opens after the trigger, its latency (rig: 25 us) and the divider edge's
    # worst delay to VIH
    t = levitator.timing
    trigger = one(frame, "camera trigger").get_xdata()[0]
    assert trigger == pytest.approx(t.camera_trigger_offset_ticks * t.tick_s)
    assert x0 == pytest.approx(trigger + 25e-6 + levitator.trigger_link.delay_to_vih_s,
                               abs=1e-12)


def test_timing_without_camera_draws_the_train():
    fig = plots.plot_timing(plain())
    frame = fig.axes[0]
    assert labelled(frame, "flashes outside")
    assert not labelled(frame, "camera exposure")


@settings(max_examples=15, deadline=None)
@given(phase=st.floats(0.0, 359.0), width=st.floats(0.2, 5.0))
def test_timing_centroid_tracks_any_phase(phase, width):
    plan = plain(width=f"{width:.4f} us", phase=f"{phase:.3f} deg")
    zoom = plots.plot_timing(plan).axes[1]
    period = 25e-6
    x_req = one(zoom, "requested phase").get_xdata()[0]
    x_c = one(zoom, "optical centroid").get_xdata()[0]
    gap = (x_c - x_req + period / 2) % period - period / 2
    assert abs(gap) <= 0.5e-8 + 1e-12  # half a 10 ns tick
    lo, hi = zoom.get_xlim()
    assert lo <= x_req <= hi and lo <= x_c <= hi
    # the window is the drive period centred on the flash
    assert x_c == pytest.approx(0.5 * (lo + hi), abs=1e-12)


# --- pulse ----------------------------------------------------------------------------------


@pytest.mark.parametrize("width, expected", [
    ("1 us", 0.997370),    # docs/references.md, "Exposure": |sinc(40 kHz x 1 us)| [calc]
    ("5 us", 0.935489),    # docs/references.md, "Exposure": |sinc(0.2)| [calc]
    ("12.5 us", 2 / math.pi),  # docs/references.md, "Exposure": |sinc(0.5)| = 2/pi [calc]
])
def test_pulse_retention_of_a_rectangle_is_sinc(width, expected):
    """Ideal edges, no phosphor, no jitter: the temporal MTF of a rectangular exposure is
    |sinc(f tau)| (Boreman 2001)."""
    fig = plots.plot_pulse(plain(width=width, harmonics=3))
    shape, ret = fig.axes
    marks = one(ret, "wave harmonics")
    assert list(marks.get_xdata()) == pytest.approx([40e3, 80e3, 120e3])
    assert marks.get_ydata()[0] == pytest.approx(expected, abs=2e-6)
    assert ret.get_xscale() == "log"
    assert ret.xaxis.get_major_formatter().unit == "Hz"
    target = one(ret, "target 90%")
    assert target.get_ydata()[0] == pytest.approx(0.9)  # default strobe.min_retention


def test_pulse_retention_zero_at_inverse_width():
    # sinc(f tau) has its first zero at f = 1/tau: 200 kHz for 5 us (Bracewell 2000).
    ret = plots.plot_pulse(plain(width="5 us")).axes[1]
    curve = one(ret, "retention")
    f, r = curve.get_xdata(), curve.get_ydata()
    near = (f > 150e3) & (f < 250e3)
    assert f[near][np.argmin(r[near])] == pytest.approx(200e3, rel=0.01)
    assert r[near].min() < 0.01


def test_pulse_shape_with_phosphor_tail(levitator):
    rangefinder = solve(load_rig(example("rangefinder-58k")))
    shape = plots.plot_pulse(rangefinder).axes[0]
    current = one(shape, "LED current")
    light = one(shape, "light output")
    assert max(current.get_ydata()) == pytest.approx(1.0, abs=1e-6)
    # the phosphor tail keeps light after the current has gone
    t_end = rangefinder.flash.width_s + rangefinder.flash.fall_s
    after = np.asarray(light.get_xdata()) > t_end * 1.02
    assert np.asarray(light.get_ydata())[after].max() > 1e-3
    assert np.asarray(current.get_ydata())[after].max() < 1e-9
    assert shape.xaxis.get_major_formatter().unit == "s"


def test_pulse_markers_agree_with_the_exposure_section(levitator):
    ret = plots.plot_pulse(levitator).axes[1]
    marks = one(ret, "wave harmonics")
    assert list(marks.get_ydata()) == pytest.approx(levitator.exposure.retention_by_harmonic,
                                                    rel=1e-9)


# --- sweep ----------------------------------------------------------------------------------


def test_sweep_points_follow_the_targets(levitator):
    fig = plots.plot_sweep(levitator)
    main, err = fig.axes
    frames = one(main, "frames (36)")
    x = np.asarray(frames.get_xdata())
    # [sweep] 36 steps over 360 deg from 90 deg: targets 90 + 10 k (mod 360) [calc].
    assert np.sort(x) == pytest.approx(np.sort((90.0 + 10.0 * np.arange(36)) % 360.0))
    errors = np.asarray(one(err, "phase error").get_ydata())
    # resolution 360 deg x 40 kHz / 100 MHz = 0.144 deg: errors within half of it [calc]
    assert np.abs(errors).max() <= 0.072 + 1e-9
    assert "deg" in main.get_xlabel() and "deg" in err.get_ylabel()


def test_sweep_steps_override():
    main = plots.plot_sweep(plain(), steps=8).axes[0]
    assert len(one(main, "frames (8)").get_xdata()) == 8


# --- divider --------------------------------------------------------------------------------


def test_divider_levels_against_jedec(unsafe):
    ax = plots.plot_divider(unsafe).axes[0]
    # JESD8-7A 1.8 V inputs over 1.65-1.95 V [mem supply range]: VIH = 0.65 x 1.95,
    # VIL = 0.35 x 1.65; input maximum VDD + 0.3 V at 1.65 V (common practice).
    assert one(ax, "VIH").get_xdata()[0] == pytest.approx(0.65 * 1.95)
    assert one(ax, "VIL").get_xdata()[0] == pytest.approx(0.35 * 1.65)
    assert one(ax, "input maximum").get_xdata()[0] == pytest.approx(1.95)
    high = one(ax, "high level")
    xs = high.get_paths()[0].vertices[:, 0]
    # 1 k over 2 k, 5 %, from 3.6 V: 3.6 x 2100 / (950 + 2100) = 2.4787 V, plus at most
    # 1 uA of leakage through ~0.7 kohm [calc].
    assert xs.max() == pytest.approx(3.6 * 2100 / 3050, abs=1e-3)
    assert xs.max() > 1.95  # visibly over the input maximum: the hazard the check reports
    assert ax.xaxis.get_major_formatter().unit == "V"


# --- thermal --------------------------------------------------------------------------------


def test_thermal_peak_matches_the_exact_pulse_train():
    plan = solve(loads_rig(FOSTER))
    fig = plots.plot_thermal(plan)
    frame, zoom = fig.axes
    trace = one(frame, "junction (steady state)")
    power = plan.led.heat_per_pulse_j / 10e-6
    rise = max(trace.get_ydata()) - 25.0  # default led.ambient 25 degC
    # docs/references.md, "Power stage": tp 10 us, T 1 ms on R = [0.05, 0.2, 0.5, 0.25] K/W,
    # tau = [10 us, 100 us, 1 ms, 10 ms]: exact periodic peak 0.061136 K/W [calc, equals brute-force
    # superposition].
    assert rise / power == pytest.approx(0.061136, rel=1e-4)
    assert one(frame, "junction limit 150").get_ydata()[0] == pytest.approx(150.0)
    # no camera: the top panel shows ten flash periods of 1 ms, the zoom one of them
    assert frame.get_xlim() == pytest.approx((0.0, 10e-3))
    assert zoom.get_xlim() == pytest.approx((0.0, 1e-3))
    assert zoom.get_title().startswith("Continuous train")


def test_thermal_trace_agrees_with_the_plan(levitator, unsafe):
    for plan in (levitator, unsafe):
        fig = plots.plot_thermal(plan)
        frame, zoom = fig.axes
        peak = one(zoom, "peak")
        assert peak.get_ydata()[0] == pytest.approx(plan.led.junction_peak_k - 273.15, abs=1e-3)
        assert "margin" in frame.get_title()
        assert frame.xaxis.get_major_formatter().unit == "s"
        assert "\N{DEGREE SIGN}C" in frame.get_ylabel()


# --- tradeoff -------------------------------------------------------------------------------


def test_tradeoff_marks_the_chosen_design(all_figures):
    ax = all_figures["tradeoff"].axes[0]
    target = one(ax, "retention target").get_xdata()[0]
    chosen = one(ax, "chosen")
    assert chosen.get_xdata()[0] >= target
    feasible = one(ax, "feasible (meets")
    assert np.all(np.asarray(feasible.get_xdata()) >= target)
    frontier = one(ax, "frontier")
    x, y = np.asarray(frontier.get_xdata()), np.asarray(frontier.get_ydata())
    # Pareto front: more retention never gives more light
    assert np.all(np.diff(x) >= 0) and np.all(np.diff(y) <= 1e-15)
    # the chosen design is the brightest feasible one (the cloud is a coarser grid: 2 %)
    assert np.max(feasible.get_ydata()) <= chosen.get_ydata()[0] * 1.02
    one(ax, "feasible region")
    assert ax.get_yscale() == "log"


# --- missing inputs ---------------------------------------------------------------------------


@pytest.mark.parametrize("kind, section", [("thermal", "led"), ("tradeoff", "led"),
                                           ("divider", "trigger_link")])
def test_missing_section_is_a_rig_error(kind, section):
    with pytest.raises(RigError) as info:
        plots.plot(plain(), kind)
    assert str(info.value).startswith(section)


def test_unknown_kind():
    with pytest.raises(RigError):
        plots.plot(plain(), "histogram")


# --- the plot command --------------------------------------------------------------------------


def test_plot_command_png_and_svg(tmp_path):
    png, svg = tmp_path / "t.png", tmp_path / "t.svg"
    assert run_cli("plot", example("levitator-40k"), "--kind", "timing", "-o", png).exit_code == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert run_cli("plot", example("levitator-40k"), "--kind", "sweep", "-o", svg).exit_code == 0
    first = svg.read_bytes()
    assert b"<svg" in first[:400]
    run_cli("plot", example("levitator-40k"), "--kind", "sweep", "-o", svg)
    assert svg.read_bytes() == first  # byte-identical rebuild
    assert not list(tmp_path.glob(".*.tmp"))  # atomic write left no temporary behind


@pytest.mark.parametrize("args", [
    ("--kind", "timing", "-o", "out.jpg"),           # bad suffix
    ("--kind", "thermal", "-o", "out.png"),          # no [led] in the rig
    ("--kind", "nonsense", "-o", "out.png"),         # unknown kind
])
def test_plot_command_bad_input_exits_2(tmp_path, args):
    rig = tmp_path / "plain.toml"
    rig.write_text(BASE.format(width="1 us", phase="0 deg", harmonics=1))
    out_args = [a if not a.startswith("out.") else str(tmp_path / a) for a in args]
    r = run_cli("plot", rig, *out_args)
    assert r.exit_code == 2
    assert "Traceback" not in r.output
    assert not (tmp_path / "out.png").exists() and not (tmp_path / "out.jpg").exists()


@settings(max_examples=20, deadline=None)
@given(width_us=st.floats(0.5, 20.0), every=st.integers(1, 6),
       exposure_ms=st.floats(0.2, 5.0))
def test_thermal_trace_peak_is_the_exact_burst_peak(width_us, every, exposure_ms):
    """The superposed trace (step responses, older frames as mean heat) peaks at the plan's
    exact periodic burst peak (physics.thermal.burst_peak) for any burst pattern."""
    text = example("levitator-40k").read_text(encoding="utf-8")
    text = (text.replace('pulse_width = "1 us"', f'pulse_width = "{width_us:.3f} us"')
                .replace("every = 1", f"every = {every}")
                .replace('exposure = "1 ms"', f'exposure = "{exposure_ms:.3f} ms"'))
    plan = solve(loads_rig(text))
    led = plan.led
    n = max(1, led.flashes_per_burst)
    width = plan.flash.current_width_s
    ends = traces.first_light(plan) + led.flash_spacing_s * np.arange(n) + width
    trace = traces.junction_trace(plan, ends) - 273.15
    rise = led.junction_peak_k - 273.15 - 25.0
    assert trace.max() == pytest.approx(led.junction_peak_k - 273.15, abs=1e-4 * max(rise, 1.0))


def test_divider_without_a_safe_pair():
    text = BASE.format(width="1 us", phase="0 deg", harmonics=1) + """
[camera]
exposure = "10 us"
frame_rate = "50 Hz"
trigger_input = { family = "lvcmos12" }
[trigger_link]
series = "E6"
tolerance = "20 %"
"""
    ax = plots.plot_divider(solve(loads_rig(text))).axes[0]
    # JESD8-12A 1.2 V inputs over 1.1-1.3 V [mem supply range]: VIH = 0.65 x 1.3 V,
    # VIL = 0.35 x 1.1 V, input maximum 1.1 + 0.3 V (common practice).
    assert one(ax, "VIH").get_xdata()[0] == pytest.approx(0.845)
    assert one(ax, "VIL").get_xdata()[0] == pytest.approx(0.385)
    assert one(ax, "input maximum").get_xdata()[0] == pytest.approx(1.4)
    assert not labelled(ax, "high level") and not labelled(ax, "low level")
    assert any("no safe pair" in t.get_text() for t in ax.texts)
    assert "infeasible" in ax.get_title()


def test_plots_draw_into_given_axes(levitator):
    """python-control pattern: ax=... draws into the caller's figure and returns it."""
    fig = Figure()
    axes = fig.subplots(2, 2)
    assert plots.plot_timing(levitator, ax=axes[0, 0]) is fig
    assert labelled(axes[0, 0], "wave at the view")  # one Axes: the drive-period panel
    assert plots.plot_pulse(levitator, ax=list(axes[1])) is fig  # a pair: both panels
    assert labelled(axes[1, 0], "light output") and labelled(axes[1, 1], "wave harmonics")
    assert plots.plot_divider(levitator, ax=axes[0, 1]) is fig
    assert len(fig.axes) == 4


def test_tradeoff_without_a_feasible_design(unsafe):
    from strobeplan.tune import tune

    ax = plots.plot_tradeoff(unsafe, result=tune(unsafe.rig)).axes[0]
    assert any(t.get_text() == "no feasible design" for t in ax.texts)
    assert not labelled(ax, "chosen")
    assert labelled(ax, "breaks a rating")
    assert "0 feasible" in ax.get_title()


def test_image_plot_draws_the_cutoff_response(levitator):
    # The top panel's curve is the cutoff's transmission: at zero deflection the level is
    # the background share (0.3 x the open level for a 70 % knife cut, Settles 2001 sec.
    # 3.2), and it rises with the deflection (knife: bright when the image moves off it).
    fig = plots.plot_image(levitator)
    top, bottom = fig.axes
    line = next(ln for ln in top.lines if ln.get_label() == "knife cutoff")
    x, y = (np.asarray(v, dtype=float) for v in line.get_data())
    img = levitator.image
    k = int(np.argmin(np.abs(x)))
    assert y[k] == pytest.approx(min(img.electrons_per_frame / img.full_well, 1.0), rel=1e-2)
    assert np.all(np.diff(y) >= -1e-12)
    labels = [t.get_text() for t in bottom.get_yticklabels()]
    assert "wave signal" in labels and "noise (total)" in labels
    assert "SNR" in bottom.get_title()


def test_image_plot_needs_a_layout():
    with pytest.raises(RigError):
        plots.plot(plain(), "image")


# --- layout -----------------------------------------------------------------------------------


def _inside(fig):
    """Every drawn text and line of ``fig`` inside it, and two panels apart (the plots use a
    fixed layout, not matplotlib's constrained one: this is what it must still keep)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(fig).get_renderer()
    fig.draw(renderer)
    width, height = fig.get_size_inches()
    box = fig.get_tightbbox(renderer)  # [in]
    assert box.x0 >= 0 and box.y0 >= 0 and box.x1 <= width and box.y1 <= height, box
    boxes = [ax.get_tightbbox(renderer) for ax in fig.axes]
    for upper, lower in zip(boxes, boxes[1:], strict=False):
        assert upper.y0 >= lower.y1, (upper, lower)  # [px]: the panels do not overlap


@pytest.mark.slow
def test_every_plot_stays_inside_its_figure(all_figures):
    figs = dict(all_figures)
    for name in ("rangefinder-58k", "opposed-pair-40k"):
        plan = solve(load_rig(example(name)))
        for kind in plots.KINDS:
            if kind != "tradeoff" and (kind != "divider" or plan.trigger_link is not None):
                figs[f"{kind}-{name}"] = plots.plot(plan, kind)
    figs["timing-plain"] = plots.plot(plain(phase="359 deg"), "timing")
    for name, fig in figs.items():
        try:
            _inside(fig)
        except AssertionError as exc:
            raise AssertionError(f"{name}: {exc}") from None


def test_log_axes_label_minor_ticks_in_the_major_notation(all_figures):
    """A short log axis labels some minor ticks (matplotlib picks 2, 3, 4, 6 x 10^k): in the
    major labels' notation, never mathtext ("3 x 10^1"): SI prefixes and the unit on an
    engineering axis, plain numbers on the trade-off's SNR (a ratio, [1])."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    fig = all_figures["tradeoff"]
    fig.draw(FigureCanvasAgg(fig).get_renderer())
    ax = fig.axes[0]
    minor = [t.get_text() for t in ax.yaxis.get_minorticklabels() if t.get_text()]
    assert minor and all(float(t) > 0 for t in minor), minor  # plain numbers
    assert ax.get_ylabel() == "image SNR per pixel per frame [1]"  # the levitator's camera

    fig = Figure()
    ax = fig.add_subplot()
    ax.set_yscale("log")
    ax.set_ylim(3e-3, 0.07)  # 3 mA s to 70 mA s: labelled minor ticks
    plots._eng(ax.yaxis, "A\N{MIDDLE DOT}s")
    fig.draw(FigureCanvasAgg(fig).get_renderer())
    minor = [t.get_text() for t in ax.yaxis.get_minorticklabels() if t.get_text()]
    major = [t.get_text() for t in ax.yaxis.get_majorticklabels() if t.get_text()]
    assert "10 mA\N{MIDDLE DOT}s" in major
    assert "20 mA\N{MIDDLE DOT}s" in minor and "4 mA\N{MIDDLE DOT}s" in minor, minor
    assert not any("$" in t for t in minor + major)
