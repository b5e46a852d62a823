"""Command line (names and exit codes as README.md, "A short tour", documents them).

Thin: parse arguments, call the solver, render. No physics.

Exit status: 0 pass or warn, 1 fail (a hazard or fault), 2 bad input or usage, 3 internal
error. Heavy modules (numpy, pydantic, the solver) are imported inside the commands so
that ``strobeplan --help`` stays fast.
"""

from __future__ import annotations

import _signal  # the C module: importing it costs nothing, so Ctrl-C is covered at once
import sys


def _quiet_interrupt(signum, frame):  # pragma: no cover - timing dependent
    """Ctrl-C while this module imports (the first tens of ms): exit 130, no traceback."""
    import os

    os._exit(130)


try:  # only while the imports below run; restored at the end of this module
    _PREVIOUS_SIGINT = _signal.getsignal(_signal.SIGINT)
    if _PREVIOUS_SIGINT is not _signal.SIG_IGN:
        _signal.signal(_signal.SIGINT, _quiet_interrupt)
    else:
        _PREVIOUS_SIGINT = None
except (ValueError, OSError):  # not the main thread
    _PREVIOUS_SIGINT = None

from contextlib import contextmanager  # noqa: E402

import click  # noqa: E402

EXIT_OK = 0
EXIT_FAIL = 1
EXIT_INPUT = 2
EXIT_INTERNAL = 3
EXIT_INTERRUPT = 130

EXAMPLES = ("levitator-40k", "rangefinder-58k", "unsafe-bench", "opposed-pair-40k")


class InputError(click.ClickException):
    """Bad input or an unwritable output: one line, exit status 2."""

    exit_code = EXIT_INPUT

    def show(self, file=None):
        from .safetext import clean

        click.echo(f"error: {clean(self.format_message())}", err=True, file=file)


@contextmanager
def user_errors():
    """Turn the core's own exceptions into exit-2 messages."""
    from .errors import StrobeplanError

    try:
        yield
    except StrobeplanError as exc:
        raise InputError(str(exc)) from None


def exit_code_for(verdict: str) -> int:
    """The one place that maps a verdict to an exit status."""
    return EXIT_FAIL if verdict == "fail" else EXIT_OK


def _solve(rig_path: str):
    import os

    # The rig's models need no pydantic plugins: skip pydantic's scan of every installed
    # package's entry points on the first validation (unless the user set the variable).
    os.environ.setdefault("PYDANTIC_DISABLE_PLUGINS", "__all__")
    from .rig import load_rig
    from .solve import solve

    with user_errors():
        return solve(load_rig(rig_path))


def _check_output(output: str | None, rig_path: str | None = None) -> None:
    """Apply the output-target policy before any work (strobeplan.io.check_target)."""
    from .io import check_target

    if output is None or output == "-":
        return
    with user_errors():
        check_target(output, rig_path)


def _write_or_echo(text, output: str | None, rig_path: str | None = None) -> None:
    """Write ``text`` (a string, or an iterable of string chunks written as they come)."""
    from .io import write_atomic

    if output is None or output == "-":
        for chunk in ((text,) if isinstance(text, str) else text):
            click.echo(chunk, nl=False)
        return
    with user_errors():
        write_atomic(output, text, rig_path)


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--debug", is_flag=True, help="Show a traceback on internal errors.")
@click.version_option(package_name="strobeplan")
@click.pass_context
def cli(ctx, debug):
    """Plan and check a phase-locked LED strobe rig for imaging ultrasound.

    Reads one TOML rig file (use - for standard input), computes timer settings, exposure,
    thermal and electrical margins, and flags every unsafe or ineffective combination with
    a reason and a fix.
    """
    ctx.ensure_object(dict)
    ctx.obj["debug"] = debug


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("--json", "as_json", is_flag=True, help="Print the plan JSON (and nothing else).")
def check(rig, as_json):
    """Compute the plan and list findings; exit 1 when any hazard or fault is found."""
    from .report.text import plan_json, plan_text

    plan = _solve(rig)
    click.echo(plan_json(plan) if as_json else plan_text(plan), nl=False)
    sys.exit(exit_code_for(plan.verdict))


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("--format", "fmt", type=click.Choice(["c", "json"]), required=True,
              help="c: a C99 header of constants; json: the same content as JSON.")
@click.option("-o", "--output", type=click.Path(allow_dash=True), default=None,
              help="Write to FILE (atomically) instead of standard output.")
def export(rig, fmt, output):
    """Timer constants: per counter its prescaler, period and compare values, and the
    per-frame compare table, each commented with its unit and realised value."""
    from .export import build_export
    from .report.export import export_c, export_json

    plan = _solve(rig)
    with user_errors():
        exp = build_export(plan)
    _write_or_echo(export_c(exp) if fmt == "c" else export_json(exp), output, rig)
    if plan.verdict == "fail":
        click.echo("warning: the plan fails its checks; see `strobeplan check` before you "
                   "load these values", err=True)


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("-o", "--output", type=click.Path(allow_dash=True), default=None,
              help="Write to FILE (atomically) instead of standard output.")
@click.option("--format", "fmt", type=click.Choice(["csv", "json"]), default="csv",
              show_default=True)
@click.option("--steps", type=click.IntRange(min=1), default=None,
              help="Frames in the phase sweep (overrides [sweep] steps); streamed, any "
                   "length within the work budget.")
@click.option("--ticks", is_flag=True, help="Print only the integer timer values.")
def schedule(rig, output, fmt, steps, ticks):
    """Per-frame trigger schedule: phase targets, timer edges, camera triggers."""
    from .report.tables import iter_schedule_csv, iter_schedule_json, iter_schedule_ticks
    from .solve import build_schedule

    _check_output(output, rig)
    plan = _solve(rig)
    with user_errors():
        sched = build_schedule(plan, steps=steps)
    if ticks:
        chunks = iter_schedule_ticks(sched)
    else:
        chunks = iter_schedule_json(sched) if fmt == "json" else iter_schedule_csv(sched)
    _write_or_echo(chunks, output, rig)
    need = plan.image.min_phase_steps if plan.image is not None else None
    if need is not None and len(sched.rows) < need:
        click.echo(f"note: {len(sched.rows)} phase steps resolve harmonics up to "
                   f"{(len(sched.rows) - 1) // 2}; the cutoff's response needs at least {need} "
                   "for analyse to separate them (image.min_phase_steps)", err=True)


@cli.command()
@click.option("--example", type=click.Choice(EXAMPLES), default="levitator-40k",
              show_default=True, help="Which bundled example to start from.")
@click.option("-o", "--output", type=click.Path(), default=None,
              help="Write the starter rig to FILE (refuses to overwrite).")
@click.option("--force", is_flag=True, help="Overwrite FILE if it exists.")
def new(example, output, force):
    """Write a commented starter rig (a bundled example)."""
    from importlib.resources import files
    from pathlib import Path

    text = (files("strobeplan.examples") / f"{example}.toml").read_text(encoding="utf-8")
    if output and Path(output).exists() and not force:
        raise InputError(f"{output}: exists; choose another name or pass --force")
    _write_or_echo(text, output)


def _quantity(text: str, kind: str, option: str) -> float:
    """An option's value as an SI float, checked with the same limits as the rig key it
    stands for (strobeplan.limits, the one limits table); bare resistances ("1k", "470")
    are read in ohm."""
    from .limits import OPTIONS, option_value

    if option in OPTIONS:
        with user_errors():
            return option_value(option, text)
    from . import units

    try:
        return units.parse(text, kind)
    except units.UnitError as exc:
        raise InputError(f"{option} {text!r}: {exc}") from None


def _range(option: str, pair) -> tuple[float, float]:
    """A MIN MAX option pair within the option's limits, MIN <= MAX."""
    from .limits import option_range

    with user_errors():
        return option_range(option, pair)


@cli.command()
@click.option("--from", "source", required=True, metavar="FAMILY",
              help="Driving output family (e.g. lvcmos33).")
@click.option("--to", "destination", required=True, metavar="FAMILY",
              help="Receiving input family (e.g. lvcmos18).")
@click.option("--series", type=click.Choice(["E3", "E6", "E12", "E24", "E48", "E96", "E192"],
                                            case_sensitive=False),
              default="E24", show_default=True, help="IEC 60063 series to search.")
@click.option("--tolerance", default=None, metavar="RATIO",
              help="Resistor tolerance, e.g. 1%  [default: the series' own, E24 5 %]")
@click.option("--capacitance", default="10pF", show_default=True,
              help="Input plus trace capacitance.")
@click.option("--check", "pair", nargs=2, default=None, metavar="TOP BOTTOM",
              help="Check this pair (e.g. --check 1k 2k: 1 k on top) instead of proposing.")
@click.option("--tolerant", is_flag=True, help="The input is over-voltage tolerant (5.5 V).")
@click.option("--edge-limit", default=None, metavar="TIME",
              help="Longest acceptable 10-90 % edge, e.g. 50ns.")
@click.option("--count", type=click.IntRange(1, 100), default=5, show_default=True,
              help="How many ranked pairs to show.")
@click.option("--json", "as_json", is_flag=True,
              help="Print the trigger_link section, findings and verdict as JSON.")
def divider(source, destination, series, tolerance, capacitance, pair, tolerant, edge_limit,
            count, as_json):
    """Size or check a resistor divider between two logic families, worst case."""
    from .report.text import plan_json, plan_text
    from .stages.link import standalone

    kwargs = dict(
        series=series.upper(), capacitance=_quantity(capacitance, "capacitance",
                                                     "--capacitance"),
        tolerance=None if tolerance is None else _quantity(tolerance, "ratio", "--tolerance"),
        tolerant=tolerant, count=count,
        edge_limit=None if edge_limit is None else _quantity(edge_limit, "time", "--edge-limit"),
    )
    if pair:
        kwargs["top"] = _quantity(pair[0], "resistance", "--check TOP")
        kwargs["bottom"] = _quantity(pair[1], "resistance", "--check BOTTOM")
    with user_errors():
        plan = standalone(source, destination, **kwargs)
    click.echo(plan_json(plan) if as_json else plan_text(plan), nl=False)
    sys.exit(exit_code_for(plan.verdict))


PLOT_KINDS = ("timing", "pulse", "thermal", "tradeoff", "divider", "sweep", "image")


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("--kind", type=click.Choice(PLOT_KINDS), required=True, help="Which plot.")
@click.option("-o", "--output", type=click.Path(), required=True,
              help="FILE.png or FILE.svg (the suffix decides the format; written atomically).")
@click.option("--dpi", type=click.IntRange(20, 1200), default=150, show_default=True,
              help="Resolution of a PNG.")
def plot(rig, kind, output, dpi):
    """Draw one plot of the plan (timing diagram, pulse, thermal, divider, sweep, tradeoff)."""
    from pathlib import Path

    suffix = Path(output).suffix.lower()
    if suffix not in (".png", ".svg"):
        raise InputError(f"{output}: expected a .png or .svg file name (the suffix decides "
                         "the format)")
    _check_output(output, rig)
    plan = _solve(rig)
    from .io import write_atomic
    from .report.plots import figure_bytes
    from .report.plots import plot as draw

    with user_errors():
        search = _search_for_plot(plan) if kind == "tradeoff" else None
        try:
            if search is not None:  # matplotlib loads while the search runs
                _import_backend(suffix[1:])
            result = search() if search is not None else None
            data = figure_bytes(draw(plan, kind, tune_result=result), suffix[1:], dpi)
        finally:
            if search is not None:
                search.cancel()
        write_atomic(output, data, rig)


def _import_backend(fmt: str) -> None:
    """Load matplotlib's figure and the backend that writes ``fmt`` (png or svg)."""
    import matplotlib.figure  # noqa: F401

    if fmt == "svg":
        import matplotlib.backends.backend_svg  # noqa: F401
    else:
        import matplotlib.backends.backend_agg  # noqa: F401


def _search_for_plot(plan):
    """The default design search of a solved rig (the trade-off plot draws it), begun in
    the background (:func:`strobeplan.background.start`: call the returned function for the
    result); None when the rig has nothing to search (the plot then says which section is
    missing)."""
    from . import tune as tuner
    from .background import start

    return start(tuner.tune, plan.rig) if _searchable(plan) else None


def _searchable(plan) -> bool:
    """Whether the rig has what the design search varies ([led] and [supply])."""
    return plan.led is not None and plan.supply is not None


def _search_and_preview(plan):
    """(the default design search or None, the report's preview section) of a solved rig."""
    from . import tune as tuner
    from .report.html import preview_html

    return (tuner.tune(plan.rig) if _searchable(plan) else None), preview_html(plan)


def _solve_with_text(rig_path: str):
    """(plan, rig text as given) for outputs that show the rig file itself."""
    from .io import read_rig_bytes
    from .rig import loads_rig
    from .solve import solve

    with user_errors():
        data, where = read_rig_bytes(rig_path)  # read once: a FIFO or stdin is fine
        rig = loads_rig(data, where)
        return solve(rig), data.decode("utf-8").removeprefix("\ufeff")


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("-o", "--output", type=click.Path(allow_dash=True), required=True,
              help="The HTML file to write (atomically); - for standard output.")
@click.option("--frames", multiple=True, metavar="FILES",
              help="Captured frames (files, folders or globs; repeat the option): adds a "
                   "\"measured against planned\" section (strobeplan analyse).")
def report(rig, output, frames):
    """Write one self-contained HTML report: verdict, findings, plots, tables, the rig."""
    from .report.html import report_html

    _check_output(output, rig)
    plan, text = _solve_with_text(rig)
    with user_errors():
        from .background import start

        # The design search and the synthetic preview need no matplotlib: begun in the
        # background while the figures are drawn here.
        both = start(_search_and_preview, plan)
        try:
            measured = None
            if frames:
                from .analyse import analyse_frames

                measured = analyse_frames(plan.rig, list(frames), plan=plan)
            page = report_html(plan, rig_text=text, tune_result=lambda: both()[0],
                               measured=measured, preview=lambda: both()[1])
        finally:
            both.cancel()
    _write_or_echo(page, output, rig)


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("-o", "--output", "outdir", type=click.Path(), required=True,
              help="Folder for the frames, loop.gif, contact_sheet.png and preview.json "
                   "(created if missing).")
@click.option("--frames", type=click.IntRange(1, 720), default=None, metavar="N",
              help="Frames over the sweep's span  [default: the schedule's rows]")
@click.option("--seed", type=click.IntRange(0, 2**63 - 1), default=0, show_default=True,
              help="Seed of the camera noise (the same seed writes the same bytes).")
@click.option("--noise/--no-noise", default=True, show_default=True,
              help="Shot, read and quantisation noise.")
def preview(rig, outdir, frames, seed, noise):
    """Draw the frames the camera will record over the sweep (synthetic schlieren)."""
    import time

    from .io import output_dir
    from .preview import render_preview, write_preview
    from .safetext import clean

    with user_errors():
        output_dir(outdir, rig, names=("preview.json",), what="the preview's files")
    plan, _ = _solve_with_text(rig)
    bar = _LazyBar(time.perf_counter(), "preview")
    try:
        with user_errors():
            result = render_preview(plan.rig, plan, frames=frames, noise=noise, seed=seed,
                                    progress=bar.update)
            written = write_preview(result, outdir, rig)
    finally:
        bar.close()
    s = result.summary
    click.echo(f"{len(result.frames)} frames of {s['width_px']} x {s['height_px']} px "
               f"({s['pixel_m'] * 1e3:.3g} mm pixels); peak {s['peak_pressure_pa']:.4g} Pa, "
               f"deflection {s['peak_deflection_rad']:.3g} rad; grey levels "
               f"{s['grey_min']}..{s['grey_max']} of {2 ** s['bit_depth'] - 1}")
    for f in result.findings:
        click.echo(f"{f.severity.upper()} {f.code}: {clean(f.message)}")
    click.echo(f"wrote {len(written)} files to {clean(str(outdir))}", err=True)


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.argument("frames", nargs=-1, required=True)
@click.option("-o", "--output", "outdir", type=click.Path(), default=None, metavar="DIR",
              help="Write analyse.json, the maps (PNG with colour bars, 32-bit TIFF) to DIR "
                   "(created if missing). Without it nothing is written.")
@click.option("--phases", default=None, metavar="LIST",
              help="The wave phase of each frame, comma-separated (deg unless a unit is "
                   "given)  [default: the rig's schedule]")
@click.option("--dark", default=None, metavar="FILE", help="Dark frame, subtracted.")
@click.option("--flat", default=None, metavar="FILE",
              help="Flat (no-sound) frame: the background of the contrast.")
@click.option("--lens", default=None, metavar="FILE",
              help="Schardin calibration: a frame of a lens of known focal length in the test "
                   "region (with --lens-focal-length).")
@click.option("--lens-focal-length", default=None, metavar="LENGTH",
              help="Focal length of the --lens calibration lens, e.g. 2m.")
@click.option("--pixel-size", default=None, metavar="LENGTH",
              help="The frames' pixel in the object plane, e.g. 95um  [default: "
                   "camera.object_pixel (or the lens layout's), else the [view] width over "
                   "the frames' width]")
@click.option("--json", "as_json", is_flag=True, help="Print analyse.json (and nothing else).")
@click.option("--write-rig", "write_rig", type=click.Path(), default=None, metavar="FILE",
              help="Write a copy of the rig with the measured strobe.calibration_offset.")
def analyse(rig, frames, outdir, phases, dark, flat, lens, lens_focal_length, pixel_size,
            as_json, write_rig):
    """Demodulate captured phase-stepped frames: amplitude and phase maps, the measured
    wavelength, speed of sound and air temperature, the phase and pressure at the view,
    and the calibration offset that makes the plan agree with the frames.

    FRAMES are files, folders or glob patterns (PNG or TIFF, 8 or 16 bit, grey or colour;
    multi-page TIFFs), in schedule order.
    """
    import math

    from .analyse import (
        analyse_frames,
        output_files,
        parse_phases,
        rig_with_offset,
        summary_json,
        summary_text,
    )
    from .io import output_dir, read_rig_bytes, write_atomic
    from .rig import loads_rig
    from .solve import solve

    if (lens is None) != (lens_focal_length is None):
        raise InputError("--lens and --lens-focal-length go together")
    focal = _quantity(lens_focal_length, "length", "--lens-focal-length") \
        if lens_focal_length else None
    if focal is not None and not focal > 0:
        raise InputError(f"--lens-focal-length {lens_focal_length!r}: expected a positive "
                         "length")
    pixel = _quantity(pixel_size, "length", "--pixel-size") if pixel_size else None
    _check_output(write_rig, rig)
    out = None
    if outdir is not None:
        with user_errors():
            out = output_dir(outdir, rig, names=("analyse.json",), what="the maps")
    with user_errors():
        data, where = read_rig_bytes(rig)
        model = loads_rig(data, where=where)
        text = data.decode("utf-8").removeprefix("\ufeff")
        plan = solve(model)
        given = parse_phases(phases) if phases is not None else None
        result = analyse_frames(model, list(frames),
                                None if given is None else [math.degrees(x) for x in given],
                                plan=plan, dark=dark, flat=flat,
                                lens=None if lens is None else (lens, focal),
                                pixel_m=pixel)
        files = output_files(result) if out is not None else {}
        new_rig = None
        if write_rig is not None:
            offset = result.calibration_offset_s
            if offset is None:
                raise InputError("--write-rig: no calibration offset was measured (see the "
                                 "findings); the rig is not written")
            new_rig = rig_with_offset(text, offset)
        if out is not None:
            output_dir(outdir, rig, names=tuple(files), create=True, what="the maps")
            for name, payload in files.items():
                write_atomic(out / name, payload, rig)
        if new_rig is not None:
            write_atomic(write_rig, new_rig, rig)
    click.echo(summary_json(result) if as_json else summary_text(result), nl=False)
    if out is not None and not as_json:
        from .safetext import clean

        click.echo(f"wrote {len(files)} files to {clean(str(out))}", err=True)
    if new_rig is not None and not as_json:
        from .safetext import clean

        click.echo(f"wrote the rig with the measured calibration offset to "
                   f"{clean(write_rig)}", err=True)


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("--min-retention", default=None, metavar="RATIO",
              help="Retention target, e.g. 90%  [default: strobe.min_retention]")
@click.option("--min-margin", default=None, metavar="KELVIN",
              help="Smallest thermal margin to the junction limit, e.g. 10K  "
                   "[default: led.min_margin]")
@click.option("--max-blur", default=None, metavar="PX",
              help="Largest motion of a travelling wave during the flash, in pixels at the "
                   "object, e.g. 2  [default: camera.max_blur, 2]")
@click.option("--series", type=click.Choice(["E3", "E6", "E12", "E24", "E48", "E96", "E192"],
                                            case_sensitive=False),
              default="E24", show_default=True, help="E-series of the series resistor.")
@click.option("--resistor-range", nargs=2, default=("0.1ohm", "100ohm"), show_default=True,
              metavar="MIN MAX", help="Series resistors searched.")
@click.option("--max-every", type=click.IntRange(1, 10_000), default=8, show_default=True,
              help="Largest `every` (flash on every N-th wave cycle).")
@click.option("--supply-range", nargs=2, default=None, metavar="MIN MAX",
              help="Also vary the supply voltage, e.g. --supply-range 12V 36V.")
@click.option("--supply-steps", type=click.IntRange(1, 10_000), default=13, show_default=True,
              help="Supply voltages in --supply-range.")
@click.option("--widths", type=click.IntRange(2, 100_000), default=160, show_default=True,
              help="Pulse widths on the log grid (whole timer ticks).")
@click.option("--json", "as_json", is_flag=True, help="Print the result JSON (and nothing else).")
@click.option("--write-rig", "write_rig", type=click.Path(), default=None, metavar="FILE",
              help="Write the tuned rig (the input with the chosen values) to FILE.")
def tune(rig, min_retention, min_margin, max_blur, series, resistor_range, max_every, supply_range,
         supply_steps, widths, as_json, write_rig):
    """Search pulse width, series resistor, `every` (and supply voltage) for the clearest
    image that still freezes the wave and keeps every part within its ratings.

    The objective is the wave's SNR per pixel per frame (the image chain, with the LED's
    droop) when the rig models the camera, else the light per frame in A s (the LED
    current integrated over the optical pulse, times the flashes per frame). Exit 0 when a
    design is found (it is verified with `check`), 1 when nothing is feasible (the reason
    is printed).
    """
    import json
    import time

    from . import tune as tuner
    from .io import read_rig_bytes
    from .report.tune_text import result_text
    from .rig import loads_rig
    from .rigedit import tuned_rig_text

    _check_output(write_rig, rig)
    with user_errors():
        data, where = read_rig_bytes(rig)  # read once: a FIFO or stdin is fine
        model = loads_rig(data, where=where)  # refuses non-UTF-8 text with one line
        text = data.decode("utf-8").removeprefix("\ufeff")
        limits, grid_options = tuner.search_options(
            model, min_retention=min_retention, min_margin=min_margin, max_blur=max_blur,
            series=series,
            resistor_range=resistor_range, max_every=max_every, supply_range=supply_range,
            supply_steps=supply_steps, widths=widths)
        bar = _LazyBar(time.perf_counter())
        try:
            result = tuner.tune(model, limits, progress=bar.update, grid_options=grid_options)
        finally:
            bar.close()
        if write_rig is not None and result.best is not None:
            from .io import write_atomic

            write_atomic(write_rig, tuned_rig_text(text, result.best, limits.min_retention,
                                                   limits.min_margin, limits.max_blur), rig)
    if as_json:
        click.echo(json.dumps(result.to_json(), indent=2))
    else:
        from .safetext import clean_block

        click.echo(clean_block(result_text(result)), nl=False)
    if write_rig is not None:
        from .safetext import clean

        if result.best is not None:
            click.echo(f"wrote the tuned rig to {clean(write_rig)}", err=True)
        else:
            click.echo(f"nothing feasible: {clean(write_rig)} not written", err=True)
    sys.exit(EXIT_OK if result.best is not None else EXIT_FAIL)


class _LazyBar:
    """click's progress bar on stderr, shown only once a search has run for 1 s on a TTY."""

    def __init__(self, started: float, label: str = "tune"):
        self.started = started
        self.label = label
        self.bar = None
        self.done = 0

    def update(self, done: int, total: int) -> None:
        import time

        if self.bar is None:
            if time.perf_counter() - self.started < 1.0 or not sys.stderr.isatty():
                self.done = done
                return
            self.bar = click.progressbar(length=total, label=self.label, file=sys.stderr,
                                         show_eta=True)
            self.bar.__enter__()
            self.bar.update(self.done)
        self.bar.update(done - self.done)
        self.done = done

    def close(self) -> None:
        if self.bar is not None:
            self.bar.__exit__(None, None, None)


@cli.command()
@click.option("-o", "--output", type=click.Path(allow_dash=True), default=None,
              help="Write to FILE (atomically) instead of standard output.")
def schema(output):
    """Print the JSON Schema (draft 2020-12) of `check --json`, generated from the models."""
    import json

    from .schema import plan_schema

    _write_or_echo(json.dumps(plan_schema(), indent=2, sort_keys=True) + "\n", output)


class _ClosedStdout:
    """Stands in for a closed standard output: any write fails, so output is never lost
    silently (the exit status says so)."""

    closed = False
    encoding = "utf-8"

    def write(self, text):
        import errno

        raise OSError(errno.EBADF, "standard output is closed")

    def flush(self):
        pass

    def isatty(self):
        return False


_STDOUT_ERRNOS = ("EBADF", "ENOSPC", "EDQUOT", "EIO", "EFBIG")


def _stdout_failed(exc: OSError) -> bool:
    import errno

    return exc.errno in {getattr(errno, n) for n in _STDOUT_ERRNOS if hasattr(errno, n)}


def _silence_stdout() -> None:
    """Point fd 1 at /dev/null so that Python's own flush at exit cannot fail again."""
    import os

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, 1)
        os.close(devnull)
    except OSError:
        pass


def main(argv=None) -> None:
    """Console entry point: maps every outcome to the exit codes of the README.

    0 pass or warn, 1 a hazard or fault, 2 bad input or an unwritable output (standard
    output included), 3 an internal error, 130 interrupted (Ctrl-C), 128 + the signal for
    SIGTERM and SIGHUP; never a traceback unless --debug.
    """
    args = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in args
    try:  # Ctrl-C raises KeyboardInterrupt from here on (unless it is ignored)
        if _signal.getsignal(_signal.SIGINT) is not _signal.SIG_IGN:
            _signal.signal(_signal.SIGINT, _signal.default_int_handler)
    except (ValueError, OSError):
        pass
    code = EXIT_OK
    try:
        import os

        from .io import install_signal_handlers

        install_signal_handlers()
        # pydantic scans every installed distribution for plugins on first use (5-8 ms
        # measured here); strobeplan uses none. setdefault keeps a user's own choice.
        os.environ.setdefault("PYDANTIC_DISABLE_PLUGINS", "__all__")
        if sys.stdout is None:
            sys.stdout = _ClosedStdout()
        try:
            code = cli.main(args=args, prog_name="strobeplan", standalone_mode=False)
            sys.stdout.flush()
        except click.Abort as exc:
            if isinstance(exc.__cause__, KeyboardInterrupt):
                raise KeyboardInterrupt from None
            raise
    except KeyboardInterrupt:
        _echo_err("interrupted")
        sys.exit(EXIT_INTERRUPT)
    except _terminated() as exc:
        _echo_err("terminated")
        sys.exit(128 + exc.signum)
    except click.UsageError as exc:
        from .safetext import clean

        hint = f" (see: {exc.ctx.command_path} --help)" if exc.ctx is not None else ""
        _echo_err(f"error: {clean(exc.format_message())}{hint}")
        sys.exit(EXIT_INPUT)
    except click.ClickException as exc:
        exc.show()
        sys.exit(exc.exit_code)
    except click.exceptions.Exit as exc:
        sys.exit(exc.exit_code)
    except click.Abort:
        _echo_err("aborted")
        sys.exit(EXIT_INPUT)
    except BrokenPipeError:
        _silence_stdout()
        sys.exit(EXIT_OK)
    except SystemExit as exc:
        try:
            sys.stdout.flush()
        except OSError as err:
            if not _stdout_failed(err):
                raise
            _stdout_error(err)
        raise exc from None
    except OSError as exc:
        if not _stdout_failed(exc):
            _internal(exc, debug)
        _stdout_error(exc)
    except Exception as exc:  # noqa: BLE001 - the last line of defence
        _internal(exc, debug)
    sys.exit(code if isinstance(code, int) else EXIT_OK)


def _terminated():
    from .io import Terminated

    return Terminated


def _echo_err(text: str) -> None:
    try:
        click.echo(text, err=True)
    except (OSError, ValueError):
        pass


def _stdout_error(exc: OSError) -> None:
    _silence_stdout()
    _echo_err(f"error: cannot write to standard output ({exc.strerror or exc})")
    sys.exit(EXIT_INPUT)


def _internal(exc: BaseException, debug: bool) -> None:
    from .safetext import clean

    if debug:
        import traceback

        traceback.print_exc()
    _echo_err(f"internal error: {type(exc).__name__}: {clean(exc, 300)} This is a bug in "
              "strobeplan: please report it with the rig file (run with --debug for a "
              "traceback).")
    sys.exit(EXIT_INTERNAL)


if _PREVIOUS_SIGINT is not None:
    _signal.signal(_signal.SIGINT, _PREVIOUS_SIGINT)

if __name__ == "__main__":
    main()
