"""Plots of a solved plan: one ``plot_X(plan, ax=None) -> Figure`` per picture.

Pattern: the plan holds the computed data; each function here only draws it, from the
plan's sections and the curves of :mod:`strobeplan.stages.traces` (which sample the
stages' models); no model is evaluated here.
matplotlib is imported inside the functions and only its object-oriented API is used
(``matplotlib.figure.Figure``, no pyplot state), so importing this module is cheap and
nothing global changes. Every axis carries its unit with SI prefixes (``EngFormatter``)
or in brackets, and curves differ by line style and marker, so a greyscale print reads.

``ax``: ``None`` makes a new figure. One-panel plots draw into a given Axes. Two-panel
plots (timing, pulse, sweep, thermal) take a pair of Axes, or one Axes for their main panel
(the drive-period zoom, the retention curve, the achieved phase, the junction trace).

A plot whose inputs the plan lacks raises :class:`strobeplan.errors.RigError` naming the
missing section or key (exit 2 in the CLI).
"""

from __future__ import annotations

import math

import numpy as np

from .. import timing
from ..errors import MISSING, RigError
from ..plan import ZERO_CELSIUS
from ..stages import traces

KINDS = ("timing", "pulse", "thermal", "tradeoff", "divider", "sweep", "image")

# Greyscale-readable styles: distinct dashes and markers, dark-to-mid greys.
INK = "black"
GREY = "0.45"
LIGHT = "0.8"

_FIG_ONE = (7.0, 3.6)
_FIG_TWO = (7.0, 6.2)


# --- helpers ------------------------------------------------------------------------------


def _need(obj, name: str, what: str, path: str | None = None):
    """``obj.name``, or a RigError naming the missing section (exit 2 in the CLI)."""
    value = getattr(obj, name, None)
    if value is None:
        raise RigError(path or name, MISSING, f"the {what} plot needs it; add it to the rig")
    return value


def _plain(text) -> str:
    """User text (a family name) drawn literally: control characters escaped, and '$'
    escaped so that matplotlib's mathtext never parses it."""
    from ..safetext import clean

    return clean(text, 80).replace("$", r"\$")


# Fixed margins [in]: each plot gives the width its y labels need (``left``); the right
# margin holds the last x tick label's overhang, the top a title, the bottom the x label and
# its tick labels, the gap the upper panel's x label and the lower panel's title. A fixed
# layout costs nothing when the figure is saved, where matplotlib's constrained layout
# measured every text once more (a second draw: half the time of a plot).
# tests/test_plots.py checks that every text of every plot stays inside its figure.
_RIGHT, _TOP, _BOTTOM, _GAP = 0.3, 0.32, 0.5, 0.78


def _new_figure(size, left: float):
    """A Figure of ``size`` [in] with fixed subplot margins (``left`` [in])."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=size)
    width, height = size
    panels = 2 if size == _FIG_TWO else 1
    axes_h = (height - _TOP - _BOTTOM - (panels - 1) * _GAP) / panels
    fig.subplots_adjust(left=left / width, right=1.0 - _RIGHT / width,
                        bottom=_BOTTOM / height, top=1.0 - _TOP / height,
                        hspace=_GAP / axes_h)
    return fig


def _one_axes(ax, left: float = 0.9):
    if ax is None:
        fig = _new_figure(_FIG_ONE, left)
        return fig, fig.add_subplot()
    return ax.figure, ax


def _two_axes(ax, left: float = 0.9):
    """(figure, first, second); with one given Axes the first panel is None."""
    if ax is None:
        fig = _new_figure(_FIG_TWO, left)
        first, second = fig.subplots(2, 1)
        return fig, first, second
    if isinstance(ax, (list, tuple, np.ndarray)):
        first, second = list(np.ravel(ax))[:2]
        return second.figure, first, second
    return ax.figure, None, ax


def _eng(axis, unit: str, places: int | None = None):
    """SI-prefixed tick labels ("10 µs") on an axis."""
    from matplotlib.ticker import EngFormatter, LogFormatter

    fmt = EngFormatter(unit=unit, places=places)
    axis.set_major_formatter(fmt)
    if axis.get_scale() == "log":
        # The minor ticks matplotlib labels on a short log axis (2, 3, 4, 6 x 10^k), in the
        # major labels' notation: its default writes them as mathtext ("3 x 10^1", parsed
        # by pyparsing at a cost of 0.2-0.4 s per figure) beside engineering majors.
        class EngMinor(LogFormatter):
            def _num_to_string(self, x, vmin, vmax):
                return fmt.format_eng(x)

        axis.set_minor_formatter(EngMinor(labelOnlyBase=False))


def _ratio(axis):
    """Plain numbers ("0.1", "20") on a log axis of a ratio, minor labels alike."""
    from matplotlib.ticker import FuncFormatter, LogFormatter

    axis.set_major_formatter(FuncFormatter(lambda x, _pos: f"{x:g}"))

    class PlainMinor(LogFormatter):
        def _num_to_string(self, x, vmin, vmax):
            return f"{x:g}"

    axis.set_minor_formatter(PlainMinor(labelOnlyBase=False))


def _percent(axis):
    from matplotlib.ticker import PercentFormatter

    axis.set_major_formatter(PercentFormatter(xmax=1.0, decimals=0))


def _deg(x: float) -> str:
    return f"{x:.4g}\N{DEGREE SIGN}"


def _si(value: float, kind: str) -> str:
    """SI-prefixed quantity for a label ("178.3 µs")."""
    from ..units import render

    text = render(value, kind)
    number, _, unit = text.partition(" ")
    if unit.startswith("u") and len(unit) > 1:
        unit = "\N{MICRO SIGN}" + unit[1:]
    return f"{number} {unit}".strip()


# --- timing -------------------------------------------------------------------------------


def flash_starts(plan) -> tuple[np.ndarray, np.ndarray]:
    """Light-start times of the flashes in frame 0 and whether each lies in the window.

    Burst mode: the ``flashes_per_frame`` flashes from ``first_flash_ticks``. Continuous or
    slow-motion strobe, or no camera: every flash slot from the first edge up to the end of
    the exposure window.

    Returns
    -------
    (ndarray, ndarray)
        Times after the frame start [s]; True where the whole light pulse is inside the
        exposure window (for a rolling shutter, the window in which all rows expose).
    """
    t, fl, rig = plan.timing, plan.flash, plan.rig
    period = t.flash_period_ticks * t.tick_s
    cam = rig.camera if t.window_start_s is not None else None  # None: no triggered window
    burst = cam is not None and not rig.strobe.continuous and t.mode != "slow_motion"
    if burst:
        n = int(t.flashes_per_frame or 0)
        first = (t.first_flash_ticks or 0) * t.tick_s
        starts = first + fl.delay_s + period * np.arange(n)
        return starts, np.ones(n, dtype=bool)
    end = (t.window_start_s + t.window_s) if cam is not None else 4 * period
    n = min(20_000, int(max(1, math.ceil(end * 1.05 / period) + 1)))
    starts = t.flash_edge_s + fl.delay_s + period * np.arange(n)
    if cam is None:  # no camera: none inside; free-running: every flash reaches some rows
        return starts, np.full(n, rig.camera is not None, dtype=bool)
    w0, w1 = t.window_start_s, t.window_start_s + t.window_s
    inside = (starts >= w0 - 1e-12) & (starts + fl.light_length_s <= w1 + 1e-12)
    return starts, inside


def _frame_panel(plan, ax):
    """Lanes over one frame: flashes (stems), camera exposure, all-rows window (bars)."""
    t, rig = plan.timing, plan.rig
    starts, inside = flash_starts(plan)
    cam = rig.camera if t.window_start_s is not None else None  # None: no triggered window
    lanes = {"flashes": 0.5}
    if cam is not None:
        lanes["exposure"] = 1.45
        trigger = (t.camera_trigger_offset_ticks or 0) * t.tick_s
        # The plan's window opens after the trigger latency, the trigger edge's delay and,
        # for a rolling shutter, the readout; the first row's exposure starts before it.
        readout = (cam.readout or 0.0) if cam.shutter == "rolling" else 0.0
        expo0 = t.window_start_s - readout
        ax.broken_barh([(expo0, cam.exposure)], (1.25, 0.4), facecolors="white",
                       edgecolors=INK, hatch="//",
                       label=f"camera exposure ({_si(cam.exposure, 'time')})")
        if cam.shutter == "rolling":
            lanes["all rows"] = 1.95
            ax.broken_barh([(t.window_start_s, t.window_s)], (1.75, 0.4), facecolors=LIGHT,
                           edgecolors=INK, hatch="..",
                           label=f"all rows exposing ({_si(t.window_s, 'time')})")
        ax.plot([trigger], [lanes["exposure"]], linestyle="none", marker=">", color=INK,
                label="camera trigger")
        span_end = max(t.window_start_s + t.window_s, expo0 + cam.exposure)
    else:
        span_end = float(starts[-1]) if starts.size else t.flash_period_ticks * t.tick_s
    if starts.size and inside.any():
        ax.vlines(starts[inside], 0.05, 0.95, colors=INK, linestyles="solid",
                  label=f"flashes in the exposure ({int(inside.sum())})")
    if starts.size and (~inside).any():
        ax.vlines(starts[~inside], 0.2, 0.8, colors=GREY, linestyles="dotted",
                  label=f"flashes outside it ({int((~inside).sum())})")
    if not inside.any() and cam is not None:
        ax.text(0.5, 0.25, "no whole flash inside the exposure", transform=ax.transAxes,
                ha="center", va="center")
    ax.set_xlim(-0.04 * span_end, 1.06 * span_end)
    top = max(lanes.values()) + 0.35
    ax.set_ylim(0.0, top + 0.55)
    ax.set_yticks(list(lanes.values()), list(lanes))
    frame = f", frame period {_si(1.0 / t.frame_rate_hz, 'time')}" if t.frame_rate_hz else ""
    ax.set_title(f"One frame (frame 0{frame})", fontsize="medium")
    ax.set_xlabel("time after the frame start")
    _eng(ax.xaxis, "s")
    ax.legend(loc="upper center", fontsize="small", ncols=3, framealpha=0.95)


def plot_timing(plan, ax=None):
    """Timing diagram: one camera frame with its burst of flashes, and one drive period.

    Top: the camera trigger, the exposure window (and, for a rolling shutter, the window in
    which all rows expose) and the flashes of frame 0. Bottom: one drive period - the drive
    at the controller, the wave at the view (delayed by the chain), the optical pulse, the
    requested phase and the achieved optical centroid.
    """
    t = _need(plan, "timing", "timing")
    _need(plan, "flash", "timing")
    fig, ax_frame, ax_zoom = _two_axes(ax, left=0.85)

    if ax_frame is not None:
        _frame_panel(plan, ax_frame)

    c = traces.drive_period_curves(plan)
    time = c["time"]
    drive_label = ("drive at the controller (square)" if c["waveform"] == "square"
                   else "drive at the controller (PWM reference)")
    ax_zoom.plot(time, c["drive"], color=GREY, linestyle="--", label=drive_label)
    ax_zoom.plot(time, c["wave"], color=INK, linestyle="-",
                 label=f"wave at the view (chain delay {_si(t.chain_delay_s, 'time')})")
    ax_zoom.fill_between(time, 0.0, c["light"], where=c["light"] > 1e-4, facecolor=LIGHT,
                         edgecolor=INK, hatch="xx", linewidth=0.8,
                         label="optical pulse (relative)")
    period = t.drive_period_ticks * t.tick_s
    f = t.drive_frequency_hz
    t_got = math.fmod(t.flash_edge_s + t.flash_delay_s, period)
    t_req = timing.time_of_phase(math.radians(t.phase_requested_deg), f, t.chain_delay_s)
    t_req = t_got + ((t_req - t_got + period / 2) % period - period / 2)  # nearest to t_got
    ax_zoom.axvline(t_req, color=INK, linestyle="-.",
                    label=f"requested phase {_deg(t.phase_requested_deg)}")
    ax_zoom.plot([t_got], [float(timing.wave_at_view(t_got, f, t.chain_delay_s))],
                 linestyle="none", marker="o", markerfacecolor="white", color=INK,
                 label=f"optical centroid (achieved {_deg(t.phase_achieved_deg)})")
    ax_zoom.set_xlim(time[0], time[-1])
    ax_zoom.set_ylim(-1.2, 2.1)
    ax_zoom.set_xlabel("time from the start of a drive period")
    ax_zoom.set_ylabel("relative amplitude [1]")
    ax_zoom.set_title(f"One drive period ({_si(f, 'frequency')}, "
                      f"{t.drive_period_ticks} ticks)", fontsize="medium")
    _eng(ax_zoom.xaxis, "s")
    ax_zoom.legend(loc="upper center", fontsize="small", ncols=2, framealpha=0.95)
    return fig


# --- pulse --------------------------------------------------------------------------------


def plot_pulse(plan, ax=None):
    """The optical pulse and its contrast retention against frequency.

    Top: LED current (trapezoid) and light output (with the phosphor tail) after the gate
    opens. Bottom: retention |H(f)|/H(0) x jitter x smear on a log frequency axis, the
    wave's harmonics marked, and the retention target.
    """
    t = _need(plan, "timing", "pulse")
    fl = _need(plan, "flash", "pulse")
    width, rise, fall, w, tau = traces.pulse_params(plan)
    fig, ax_shape, ax_ret = _two_axes(ax, left=0.85)

    if ax_shape is not None:
        length = fl.light_length_s
        time = np.linspace(-0.1 * length, 1.3 * length, 1501)
        current, light, centroid = traces.pulse_curves(plan, time)
        ax_shape.plot(time, current, color=GREY, linestyle="--", label="LED current (relative)")
        ax_shape.plot(time, light, color=INK, linestyle="-", label="light output (relative)")
        ax_shape.axvline(centroid, color=INK, linestyle=":",
                         label=f"optical centroid ({_si(centroid, 'time')})")
        ax_shape.set_xlabel("time after the gate opens")
        ax_shape.set_ylabel("relative level [1]")
        ax_shape.set_ylim(-0.05, 1.25)
        ax_shape.set_title(f"Optical pulse (gate {_si(width, 'time')})", fontsize="medium")
        _eng(ax_shape.xaxis, "s")
        ax_shape.legend(loc="upper right", fontsize="small", framealpha=0.9)

    f0 = t.drive_frequency_hz
    n_harm = plan.rig.wave.harmonics
    duration = max(fl.light_length_s, width)
    f_hi = max(4.0 / duration, 3.0 * n_harm * f0)
    freq = np.geomspace(0.1 * f0, f_hi, 1200)
    ret = np.asarray(traces.retention_curve(plan, freq), dtype=float)
    ax_ret.plot(freq, ret, color=INK, linestyle="-", label="retention")
    harmonics = f0 * np.arange(1, n_harm + 1)
    at_h = np.asarray(traces.retention_curve(plan, harmonics), dtype=float)
    ax_ret.plot(harmonics, at_h, linestyle="none", marker="s", markerfacecolor="white",
                color=INK, markeredgecolor=INK, label="wave harmonics")
    for k, (fh, r) in enumerate(zip(harmonics, at_h, strict=True), start=1):
        ax_ret.axvline(fh, color=GREY, linestyle=":", linewidth=0.8)
        ax_ret.annotate(f"{k}f: {r:.1%}", (fh, r), textcoords="offset points",
                        xytext=(4, -12 - 10 * ((k - 1) % 2)), fontsize="x-small")
    target = plan.rig.strobe.min_retention
    ax_ret.axhline(target, color=GREY, linestyle="--", label=f"target {target:.0%}")
    ax_ret.set_xscale("log")
    ax_ret.set_xlim(freq[0], freq[-1])
    ax_ret.set_ylim(0.0, 1.05)
    ax_ret.set_xlabel("frequency")
    ax_ret.set_ylabel("contrast retention")
    _eng(ax_ret.xaxis, "Hz")
    _percent(ax_ret.yaxis)
    ax_ret.set_title("Retention against frequency", fontsize="medium")
    ax_ret.legend(loc="lower left", fontsize="small", framealpha=0.9)
    return fig


# --- thermal ------------------------------------------------------------------------------


# Most pulse edges drawn as extra samples per panel (the pulses nearest the burst's end,
# where the peak is); the base grid adds 1500 samples. Bounds a plot's work and size.
MAX_EDGE_SAMPLES = 3000


def plot_thermal(plan, ax=None):
    """LED junction temperature over one frame period, with the limit and the margin.

    Top: the whole frame period. Bottom: a zoom on the burst, where the peak is.
    """
    led = _need(plan, "led", "thermal", path="led")
    _need(plan, "timing", "thermal")
    rig = plan.rig
    fig, ax_frame, ax_zoom = _two_axes(ax, left=0.75)
    width = plan.flash.current_width_s  # the current's duration (gate plus switch delays)
    spacing = led.flash_spacing_s
    n = max(1, int(led.flashes_per_burst))
    burst = led.pattern == "burst"
    frame = led.frame_period_s if burst else spacing  # the period of the heat pattern
    t0 = traces.first_light(plan) if burst else 0.0
    limit_c = led.junction_max_k - ZERO_CELSIUS
    peak_c = led.junction_peak_k - ZERO_CELSIUS
    mean_c = led.junction_mean_k - ZERO_CELSIUS
    # Top panel: one frame; a continuous train repeats every flash, so without a camera
    # frame it shows ten flash periods.
    if burst:
        view, view_name = frame, "frame"
    elif plan.timing.frame_rate_hz:
        view, view_name = 1.0 / plan.timing.frame_rate_hz, "frame"
    else:
        view, view_name = 10 * spacing, "ten flash periods"

    def draw(ax, lo, hi, points, with_limit):
        count = n if burst else min(20_000, math.ceil(hi / spacing) + 1)
        keep = MAX_EDGE_SAMPLES // 3 - 1  # three samples per edge, plus the first pulse
        index = np.unique(np.r_[0, np.arange(max(0, count - keep), count)])  # first, last
        ends = t0 + spacing * index + width
        base = np.linspace(lo, hi, points)
        extra = np.concatenate([ends, ends - width, ends - 1e-3 * width])
        time = np.unique(np.concatenate([base, extra[(extra >= lo) & (extra <= hi)]]))
        temp_c = traces.junction_trace(plan, np.mod(time, frame)) - ZERO_CELSIUS
        ax.plot(time, temp_c, color=INK, linestyle="-", label="junction (steady state)")
        ax.axhline(mean_c, color=GREY, linestyle=":",
                   label=f"mean {mean_c:.4g} \N{DEGREE SIGN}C")
        ambient_c = rig.led.ambient - ZERO_CELSIUS
        if with_limit:
            ax.axhline(limit_c, color=INK, linestyle="--",
                       label=f"junction limit {limit_c:.4g} \N{DEGREE SIGN}C")
            ax.axhline(ambient_c, color=GREY, linestyle="-.",
                       label=f"ambient {ambient_c:.4g} \N{DEGREE SIGN}C")
            k = int(np.argmax(temp_c))
            ax.annotate("", xy=(time[k], limit_c), xytext=(time[k], peak_c),
                        arrowprops={"arrowstyle": "<->", "color": INK})
            right = time[k] > lo + 0.6 * (hi - lo)  # near the right end: the text on the left
            ax.text(time[k], 0.5 * (peak_c + limit_c),
                    f"margin {led.thermal_margin_k:.3g} K  " if right
                    else f"  margin {led.thermal_margin_k:.3g} K",
                    ha="right" if right else "left", va="center", fontsize="small")
            top = max(limit_c, peak_c)
            ax.set_ylim(min(ambient_c, float(temp_c.min())) - 0.05 * (top - ambient_c),
                        top + 0.12 * (top - ambient_c))
        else:
            spread = max(float(temp_c.max() - temp_c.min()), 0.1)
            ax.set_ylim(float(temp_c.min()) - 0.2 * spread, float(temp_c.max()) + 0.45 * spread)
        ax.set_xlim(lo, hi)
        ax.set_ylabel("temperature [\N{DEGREE SIGN}C]")
        _eng(ax.xaxis, "s")
        return time, temp_c

    if ax_frame is not None:
        draw(ax_frame, 0.0, view, 1500, with_limit=True)
        ax_frame.set_xlabel("time after the frame start" if burst else "time")
        over = (f"one frame period ({_si(view, 'time')})" if view_name == "frame"
                else view_name)
        ax_frame.set_title(f"Junction temperature over {over}: peak {peak_c:.4g} "
                           f"\N{DEGREE SIGN}C, margin {led.thermal_margin_k:.3g} K",
                           fontsize="medium")
        ax_frame.legend(loc="center right", fontsize="small", framealpha=0.95)
    burst_end = t0 + (n - 1) * spacing + width
    lo = max(0.0, t0 - 0.1 * (burst_end - t0) - spacing)
    hi = min(frame, burst_end + 0.15 * (burst_end - t0) + 2 * spacing)
    time, temp_c = draw(ax_zoom, lo, hi, 1500, with_limit=ax_frame is None)
    k = int(np.argmax(temp_c))
    ax_zoom.plot([time[k]], [temp_c[k]], linestyle="none", marker="^", color=INK,
                 label=f"peak {peak_c:.4g} \N{DEGREE SIGN}C")
    if burst:
        ax_zoom.set_xlabel("time after the frame start (the burst)")
        ax_zoom.set_title(f"The burst: {n} flash{'es' if n > 1 else ''} of "
                          f"{_si(width, 'time')} every {_si(spacing, 'time')}",
                          fontsize="medium")
    else:
        ax_zoom.set_xlabel("time after a flash starts")
        ax_zoom.set_title(f"Continuous train: {_si(width, 'time')} every "
                          f"{_si(spacing, 'time')} (steady state)", fontsize="medium")
    ax_zoom.legend(loc="upper left", fontsize="small", ncols=2, framealpha=0.95)
    return fig


# --- tradeoff -----------------------------------------------------------------------------


def result_objective(plan, result):
    """The search objective's value for the rig as given (read from its sections)."""
    if result.objective.startswith("image SNR") and plan.image is not None:
        return plan.image.snr
    return plan.led.light_per_frame_a_s


def plot_tradeoff(plan, ax=None, result=None):
    """tune's objective (the image SNR per pixel per frame, else the light per frame) against
    retention over the tune space (``strobeplan tune``).

    ``result`` is the :class:`strobeplan.tune.TuneResult` to draw (it carries the evaluated
    cloud): every point is the brightest candidate of one (pulse width, every) cell that
    meets every constraint except retention (and visibility), the quantities the frontier
    trades; filled when it also meets the retention target. The frontier, the feasible
    region (retention at or above the target, light up to the frontier) shaded, the chosen
    design and the rig as given marked.
    """
    _need(plan, "led", "tradeoff", path="led")
    _need(plan, "supply", "tradeoff", path="supply")
    if result is None:
        raise RigError("--kind", "tradeoff", "needs the result of a design search (tune)")
    cloud = result.cloud
    target = result.min_retention
    best = cloud.safe_light.ravel()
    any_best = cloud.any_light.ravel()
    cell_ret = cloud.retention.ravel()
    shown = np.isfinite(best) & (best > 0)
    ok = shown & (cell_ret >= target)
    unsafe = np.isfinite(any_best) & (any_best > 0) & ~(any_best <= best)

    fig, ax = _one_axes(ax, left=1.05)
    front = sorted(result.frontier, key=lambda d: d.retention)
    fr = np.array([d.retention for d in front])
    fl = np.array([d.score for d in front])
    floor = best[shown] if shown.any() else any_best[np.isfinite(any_best) & (any_best > 0)]
    y_lo = 0.5 * float(np.min(floor)) if floor.size else 1e-9
    if fr.size:
        sel = fr >= target
        if sel.any():
            ax.fill_between(fr[sel], y_lo, fl[sel], step="post", facecolor=LIGHT,
                            edgecolor=GREY, hatch="..", linewidth=0,
                            label="feasible region")
        ax.step(fr, fl, where="post", color=INK, linestyle="-", label="frontier (safe)")
    ax.plot(cell_ret[unsafe], any_best[unsafe], linestyle="none", marker="x", markersize=3,
            color=LIGHT, label="breaks a rating (brightest per cell)")
    ax.plot(cell_ret[shown & ~ok], best[shown & ~ok], linestyle="none", marker="o",
            markersize=3, markerfacecolor="white", color=GREY,
            label="safe, below the retention target")
    ax.plot(cell_ret[ok], best[ok], linestyle="none", marker="o", markersize=3,
            color=GREY, label="feasible (meets every constraint)")
    ax.axvline(target, color=INK, linestyle="--", label=f"retention target {target:.0%}")
    if plan.exposure is not None:
        here = float(np.nan_to_num(result_objective(plan, result), nan=0.0))
        if here > 0:
            ax.plot([plan.exposure.retention], [here], linestyle="none", marker="D",
                    markerfacecolor="white", color=INK, markeredgecolor=INK, markersize=7,
                    label="the rig as given")
    if result.best is not None:
        b = result.best
        ax.plot([b.retention], [b.score], linestyle="none", marker="*",
                markersize=14, color=INK,
                label=f"chosen: {_si(b.pulse_width_s, 'time')}, "
                      f"{_si(b.series_resistor_ohm, 'resistance')}, every {b.every}"
                      + (f" (limited by {b.limited_by})" if b.limited_by else ""))
    else:
        ax.text(0.5, 0.5, "no feasible design", transform=ax.transAxes, ha="center")
    ax.set_yscale("log")
    ax.set_ylim(bottom=y_lo)
    ax.set_xlabel("contrast retention at the wave frequency")
    snr = result.objective.startswith("image SNR")  # a ratio; else light per frame [A s]
    ax.set_ylabel(f"{result.objective} [1]" if snr else result.objective)
    _percent(ax.xaxis)
    if snr:
        _ratio(ax.yaxis)
    else:
        _eng(ax.yaxis, "A\N{MIDDLE DOT}s")
    ax.set_title(f"Design space: {result.candidates} candidates, {result.feasible} feasible",
                 fontsize="medium")
    ax.legend(loc="lower left", fontsize="x-small", framealpha=0.95)
    return fig


# --- divider ------------------------------------------------------------------------------


def plot_divider(plan, ax=None):
    """Worst-case high and low levels of the camera-trigger divider against the input's
    VIL, VIH and absolute maximum (the ``trigger_link`` section)."""
    link = _need(plan, "trigger_link", "divider", path="trigger_link")
    fig, ax = _one_axes(ax, left=0.55)
    vih, vil, vmax = link.vih_v, link.vil_v, link.input_max_v
    hi_min, hi_max, lo_max = link.v_high_min_v, link.v_high_max_v, link.v_low_max_v
    known = [v for v in (vih, vil, vmax, hi_min, hi_max, lo_max) if v is not None]
    right = 1.18 * max(known)
    ax.axvspan(vil, vih, facecolor=LIGHT, edgecolor=GREY, hatch="..", linewidth=0,
               label="undefined (between VIL and VIH)")
    ax.axvspan(vmax, right, facecolor="white", edgecolor=GREY, hatch="\\\\", linewidth=0,
               label="over the input maximum")
    ax.axvline(vil, color=INK, linestyle="--", label=f"VIL {_si(vil, 'voltage')}")
    ax.axvline(vih, color=INK, linestyle="-.", label=f"VIH {_si(vih, 'voltage')}")
    ax.axvline(vmax, color=INK, linestyle="-", linewidth=2.0,
               label=f"input maximum {_si(vmax, 'voltage')}")
    if hi_min is not None and hi_max is not None and lo_max is not None:
        ax.broken_barh([(hi_min, hi_max - hi_min)], (0.75, 0.5), facecolors="white",
                       edgecolors=INK, hatch="//",
                       label=f"high level, worst case {_si(hi_min, 'voltage')} to "
                             f"{_si(hi_max, 'voltage')}")
        ax.broken_barh([(0.0, lo_max)], (-0.25, 0.5), facecolors=GREY, edgecolors=INK,
                       label=f"low level, worst case up to {_si(lo_max, 'voltage')}")
        if link.v_nominal_v is not None:
            ax.plot([link.v_nominal_v], [1.0], linestyle="none", marker="D", color=INK,
                    markerfacecolor="white", label=f"nominal {_si(link.v_nominal_v, 'voltage')}")
        pair = (f"{_si(link.top_ohm, 'resistance')} / {_si(link.bottom_ohm, 'resistance')} "
                f"({link.mode})")
    else:
        import textwrap

        why = textwrap.fill(f"no safe pair: {link.reason or 'nothing to show'}", 60)
        ax.text(0.5, 0.42, why, transform=ax.transAxes, ha="center", va="center",
                fontsize="small", bbox={"facecolor": "white", "edgecolor": INK})
        pair = link.mode
    ax.set_xlim(0.0, right)
    ax.set_ylim(-0.7, 2.6)
    ax.set_yticks([0.0, 1.0], ["low", "high"])
    ax.set_xlabel("voltage at the camera trigger input")
    _eng(ax.xaxis, "V")
    ax.set_title(f"Trigger divider {pair}: {_plain(link.source_family)} "
                 f"\N{RIGHTWARDS ARROW} {_plain(link.destination_family)}, {link.series} "
                 f"{link.tolerance:.0%}",
                 fontsize="medium")
    ax.legend(loc="upper left", fontsize="x-small", ncols=2, framealpha=0.95)
    return fig


# --- sweep --------------------------------------------------------------------------------


def plot_sweep(plan, ax=None, steps: int | None = None):
    """Achieved against target phase across the schedule, and the per-frame phase error.

    ``steps`` overrides the number of frames, as ``strobeplan schedule --steps``.
    """
    from ..solve import build_schedule

    t = _need(plan, "timing", "sweep")
    if plan.lock is None:
        raise RigError("timing", MISSING, "the sweep plot needs a solved plan")
    sched = build_schedule(plan, steps=steps)
    target = np.array([r.target_phase_deg for r in sched.rows])
    achieved = np.array([r.achieved_phase_deg for r in sched.rows])
    error = np.array([r.phase_error_deg for r in sched.rows])
    frames = np.array([r.frame for r in sched.rows])
    fig, ax_err, ax_main = _two_axes(ax, left=0.85)
    # The error panel goes below the main one when both are drawn.
    if ax_err is not None:
        ax_main, ax_err = ax_err, ax_main

    ax_main.plot([0, 360], [0, 360], color=GREY, linestyle="--", label="achieved = target")
    ax_main.plot(target, achieved, linestyle="none", marker="o", markerfacecolor="white",
                 color=INK, markeredgecolor=INK, markersize=4, label=f"frames ({len(frames)})")
    ax_main.set_xlim(0, 360)
    ax_main.set_ylim(0, 360)
    ax_main.set_xticks(range(0, 361, 45))
    ax_main.set_yticks(range(0, 361, 90))
    ax_main.set_xlabel("target phase [deg]")
    ax_main.set_ylabel("achieved phase [deg]")
    ax_main.set_title(f"Phase across the schedule ({sched.mode})", fontsize="medium")
    ax_main.legend(loc="upper left", fontsize="small", framealpha=0.9)

    if ax_err is not None:
        half = 0.5 * t.phase_resolution_deg
        ax_err.axhspan(-half, half, facecolor=LIGHT, edgecolor=GREY, hatch="..",
                       label=f"\N{PLUS-MINUS SIGN} half a tick ({_deg(half)})")
        from matplotlib.ticker import MaxNLocator

        ax_err.plot(frames, error, color=INK, linestyle="-", marker=".", label="phase error")
        ax_err.set_xlim(-0.5, max(len(frames), 1) - 0.5)
        ax_err.xaxis.set_major_locator(MaxNLocator(integer=True))
        ax_err.set_xlabel("frame [1]")
        ax_err.set_ylabel("phase error [deg]")
        ax_err.set_title(f"Phase error per frame (resolution {_deg(t.phase_resolution_deg)})",
                         fontsize="medium")
        bound = max(float(np.max(np.abs(error))) if error.size else 0.0, half) * 1.6
        ax_err.set_ylim(-bound, bound)
        ax_err.legend(loc="upper right", fontsize="small", framealpha=0.9)
    return fig


# --- dispatch -----------------------------------------------------------------------------


SVG_HASHSALT = "strobeplan"  # fixed, so rebuilt SVGs are byte-identical


def figure_bytes(fig, fmt: str, dpi: float = 150) -> bytes:
    """The figure as PNG or SVG bytes, reproducible (fixed SVG hash salt, no date)."""
    import io

    import matplotlib

    if fmt not in ("png", "svg"):
        raise RigError("-o", fmt, "expected a .png or .svg file name")
    buf = io.BytesIO()
    # PNG at zlib level 3: as small as the default level 6 for these flat-coloured plots
    # (within 5 %) and a third faster to write.
    extra = {"pil_kwargs": {"compress_level": 3}} if fmt == "png" else {}
    with matplotlib.rc_context({"svg.hashsalt": SVG_HASHSALT}):
        fig.savefig(buf, format=fmt, dpi=dpi,
                    metadata={"Date": None} if fmt == "svg" else {"Software": None}, **extra)
    return buf.getvalue()


def plot_image(plan, ax=None):
    """What the camera records: the cutoff's response and the grey-level budget.

    Top: the mean level of a pixel (electrons per frame, as a share of the full well)
    against a steady deflection, with the wave's peak deflection, the full well and the
    too-dark line. A knife edge is linear, then clips; a rod stop is even (dark field, the
    wave at twice its spatial frequency). Bottom: the budget of one pixel per frame (the
    background, the wave's signal amplitude, the noise and its parts) on a log scale.
    """
    img = _need(plan, "image", "image", path="optics.layout")
    if img.electrons_open is None or img.full_well is None:
        raise RigError("led.optical_power", MISSING, "the image plot needs the light budget: "
                       "led.optical_power, led.emitting_size and the camera's "
                       "quantum_efficiency, full_well and read_noise")
    from ..stages.image import TOO_DARK

    fig, top, bottom = _two_axes(ax, left=1.1)
    if top is not None:
        eps, level = traces.image_response(plan)
        share = np.minimum(level, img.full_well) / img.full_well
        top.plot(eps, share, color=INK, linestyle="-", label=f"{img.cutoff} cutoff")
        top.axhline(1.0, color=GREY, linestyle="--", label="full well")
        top.axhline(TOO_DARK, color=GREY, linestyle=":", label="too dark below")
        if img.deflection_rad is not None:
            for sign in (-1.0, 1.0):
                top.axvline(sign * img.deflection_rad, color=GREY, linestyle="-.",
                            label="wave's peak deflection" if sign > 0 else "_")
        from matplotlib.ticker import MaxNLocator

        _eng(top.xaxis, "rad")
        top.xaxis.set_major_locator(MaxNLocator(5))
        _percent(top.yaxis)
        top.set_xlabel("deflection")
        top.set_ylabel("level (share of full well)")
        note = " (dark field: the wave at twice its frequency)" if img.response_order == 2 \
            else ""
        top.set_title(f"Cutoff response{note}")
        top.legend(loc="best", fontsize="small")
    rows = [("background", img.electrons_per_frame),
            ("wave signal", img.signal_electrons or 0.0),
            ("noise (total)", img.noise_electrons),
            ("shot noise", img.shot_noise_electrons),
            ("read noise", img.read_noise_electrons),
            ("quantisation", img.quantisation_noise_electrons),
            ("full well", img.full_well)]
    names = [r[0] for r in rows]
    values = np.maximum([float(r[1]) for r in rows], 1e-3)
    shades = [GREY if n in ("background", "full well") else INK if n == "wave signal"
              else LIGHT for n in names]
    bottom.barh(names, values, color=shades, edgecolor=INK, linewidth=0.5)
    bottom.set_xscale("log")
    _eng(bottom.xaxis, "e-")
    bottom.invert_yaxis()
    bottom.set_xlabel("electrons per pixel per frame")
    snr = img.snr if img.snr is not None else float("nan")
    bottom.set_title(f"Grey-level budget: SNR {snr:.3g} per pixel per frame")
    return fig


def plot(plan, kind: str, ax=None, tune_result=None):
    """The plot of one ``kind`` (see :data:`KINDS`); ``tune_result`` feeds "tradeoff"."""
    funcs = {"timing": plot_timing, "pulse": plot_pulse, "thermal": plot_thermal,
             "tradeoff": plot_tradeoff, "divider": plot_divider, "sweep": plot_sweep,
             "image": plot_image}
    if kind not in funcs:
        raise RigError("--kind", kind, f"expected one of {', '.join(KINDS)}")
    draw = (lambda: plot_tradeoff(plan, ax=ax, result=tune_result)) if kind == "tradeoff" \
        else (lambda: funcs[kind](plan, ax=ax))
    if ax is not None:
        return draw()
    import matplotlib

    # Titles at their fixed place (axes.titley = 1, the pad above the axes) instead of
    # matplotlib's automatic placement, which measures every y tick label once more at each
    # draw to move a title clear of an offset text ("1e-5", "+60") over the y axis: a
    # quarter of a plot's drawing time. With no offset text both places are the same; a
    # plot that shows one is drawn again with the automatic placement.
    with matplotlib.rc_context({"axes.titley": 1.0}):
        fig = draw()
    if any(_y_offset(a) for a in fig.axes):
        fig = draw()
    return fig


def _y_offset(ax) -> str:
    """The offset text the y axis of ``ax`` will show at its current limits ("" if none)."""
    axis = ax.yaxis
    fmt = axis.get_major_formatter()
    fmt.set_locs(axis.get_majorticklocs())
    return fmt.get_offset()
