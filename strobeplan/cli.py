"""Command line (design §5). Thin: parse arguments, call the solver, render. No physics.

Exit status: 0 pass or warn, 1 fail (a hazard or fault), 2 bad input or usage, 3 internal
error. Heavy modules (numpy, pydantic, the solver) are imported inside the commands so
that ``strobeplan --help`` stays fast.
"""

from __future__ import annotations

import sys
from contextlib import contextmanager

import click

EXIT_OK = 0
EXIT_FAIL = 1
EXIT_INPUT = 2
EXIT_INTERNAL = 3

EXAMPLES = ("levitator-40k", "rangefinder-58k", "unsafe-bench", "opposed-pair-40k")


class InputError(click.ClickException):
    """Bad input or an unwritable output: one line, exit status 2."""

    exit_code = EXIT_INPUT

    def show(self, file=None):
        click.echo(f"error: {self.format_message()}", err=True, file=file)


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
    from .rig import load_rig
    from .solve import solve

    with user_errors():
        return solve(load_rig(rig_path))


def _same_file(a: str, b: str) -> bool:
    import os

    try:
        return a != "-" and os.path.samefile(a, b)
    except OSError:
        return False


def _write_or_echo(text: str, output: str | None, rig_path: str | None = None) -> None:
    from .io import write_atomic

    if output is None or output == "-":
        click.echo(text, nl=False)
        return
    if rig_path is not None and _same_file(rig_path, output):
        raise InputError(f"{output}: is the rig file itself; choose another output file")
    with user_errors():
        write_atomic(output, text)


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
@click.option("-o", "--output", type=click.Path(allow_dash=True), default=None,
              help="Write to FILE (atomically) instead of standard output.")
@click.option("--format", "fmt", type=click.Choice(["csv", "json"]), default="csv",
              show_default=True)
@click.option("--steps", type=click.IntRange(1, 100_000), default=None,
              help="Frames in the phase sweep (overrides [sweep] steps).")
@click.option("--ticks", is_flag=True, help="Print only the integer timer values.")
def schedule(rig, output, fmt, steps, ticks):
    """Per-frame trigger schedule: phase targets, timer edges, camera triggers."""
    from .report.tables import schedule_csv, schedule_json, schedule_ticks
    from .solve import build_schedule

    plan = _solve(rig)
    with user_errors():
        sched = build_schedule(plan, steps=steps)
    if ticks:
        text = schedule_ticks(sched)
    else:
        text = schedule_json(sched) if fmt == "json" else schedule_csv(sched)
    _write_or_echo(text, output, rig)


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
    """Parse an option value through strobeplan.units; bare resistances ("1k", "470") get
    "ohm" appended."""
    from . import units

    try:
        return units.parse(text, kind)
    except units.UnitError as exc:
        if kind == "resistance":
            try:
                return units.parse(text.strip() + "ohm", kind)
            except units.UnitError:
                pass
        raise InputError(f"{option} {text!r}: {exc}") from None


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


PLOT_KINDS = ("timing", "pulse", "thermal", "tradeoff", "divider", "sweep")


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
    if _same_file(rig, output):
        raise InputError(f"{output}: is the rig file itself; choose another output file")
    plan = _solve(rig)
    from .io import write_atomic
    from .report.plots import figure_bytes
    from .report.plots import plot as draw

    with user_errors():
        data = figure_bytes(draw(plan, kind), suffix[1:], dpi)
        write_atomic(output, data)


def _solve_with_text(rig_path: str):
    """(plan, rig text as given) for outputs that show the rig file itself."""
    from pathlib import Path

    from .rig import load_rig, loads_rig
    from .solve import solve

    with user_errors():
        if rig_path == "-":
            data, where = sys.stdin.buffer.read(), "<stdin>"
        else:
            try:
                data, where = Path(rig_path).read_bytes(), rig_path
            except OSError:
                load_rig(rig_path)  # raises the one-line RigError for this path
                raise
        rig = loads_rig(data, where)
        return solve(rig), data.decode("utf-8")


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("-o", "--output", type=click.Path(allow_dash=True), required=True,
              help="The HTML file to write (atomically); - for standard output.")
def report(rig, output):
    """Write one self-contained HTML report: verdict, findings, plots, tables, the rig."""
    from .report.html import report_html

    plan, text = _solve_with_text(rig)
    with user_errors():
        page = report_html(plan, rig_text=text)
    _write_or_echo(page, output, rig)


@cli.command()
@click.argument("rig", type=click.Path(allow_dash=True))
@click.option("--min-retention", default=None, metavar="RATIO",
              help="Retention target, e.g. 90%  [default: strobe.min_retention]")
@click.option("--min-margin", default="10K", show_default=True, metavar="KELVIN",
              help="Smallest thermal margin to the junction limit.")
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
def tune(rig, min_retention, min_margin, series, resistor_range, max_every, supply_range,
         supply_steps, widths, as_json, write_rig):
    """Search pulse width, series resistor, `every` (and supply voltage) for the most light
    per frame that still freezes the wave and keeps every part within its ratings.

    Light per frame is in A s: the LED current integrated over the optical pulse, times the
    flashes per frame (light is taken proportional to current). Exit 0 when a design is
    found (it is verified with `check`), 1 when nothing is feasible (the reason is printed).
    """
    import json
    import time

    from . import tune as tuner
    from .rig import loads_rig

    if write_rig is not None and _same_file(rig, write_rig):
        raise InputError(f"{write_rig}: is the rig file itself; choose another output file")
    with user_errors():
        if rig == "-":
            text = sys.stdin.read()
        else:
            try:
                with open(rig, encoding="utf-8") as fh:
                    text = fh.read()
            except (OSError, UnicodeDecodeError):
                text = None
        model = loads_rig(text, where=rig) if text is not None else _load(rig)
        from .solve import solve

        base = solve(model)
        limits = tuner.Limits(
            min_retention=model.strobe.min_retention if min_retention is None
            else _quantity(min_retention, "ratio", "--min-retention"),
            min_margin=_quantity(min_margin, "temperature_difference", "--min-margin"))
        if not 0.0 < limits.min_retention < 1.0:
            raise InputError(f"--min-retention {min_retention!r}: expected a ratio between 0 "
                             "and 100 % (e.g. 90%)")
        if not limits.min_margin >= 0.0:
            raise InputError(f"--min-margin {min_margin!r}: expected 0 K or more")
        grid = tuner.default_grid(
            model, base, widths=widths, series=series.upper(),
            resistor_range=(_quantity(resistor_range[0], "resistance", "--resistor-range"),
                            _quantity(resistor_range[1], "resistance", "--resistor-range")),
            max_every=max_every, supply_steps=supply_steps,
            supply_range=None if supply_range is None else (
                _quantity(supply_range[0], "voltage", "--supply-range"),
                _quantity(supply_range[1], "voltage", "--supply-range")))
        bar = _LazyBar(time.perf_counter())
        try:
            result = tuner.tune(model, limits, grid, progress=bar.update, base=base)
        finally:
            bar.close()
        if write_rig is not None and result.best is not None:
            if text is None:
                raise InputError(f"{rig}: cannot be read as text to write the tuned rig")
            from .io import write_atomic

            write_atomic(write_rig, tuner.tuned_rig_text(
                text, result.best, tuner._retention_override(model, limits)))
    if as_json:
        click.echo(json.dumps(result.to_json(), indent=2))
    else:
        click.echo(tuner.result_text(result), nl=False)
    if write_rig is not None:
        if result.best is not None:
            click.echo(f"wrote the tuned rig to {write_rig}", err=True)
        else:
            click.echo(f"nothing feasible: {write_rig} not written", err=True)
    sys.exit(EXIT_OK if result.best is not None else EXIT_FAIL)


def _load(rig):
    from .rig import load_rig

    return load_rig(rig)


class _LazyBar:
    """click's progress bar on stderr, shown only once a search has run for 1 s on a TTY."""

    def __init__(self, started: float):
        self.started = started
        self.bar = None
        self.done = 0

    def update(self, done: int, total: int) -> None:
        import time

        if self.bar is None:
            if time.perf_counter() - self.started < 1.0 or not sys.stderr.isatty():
                self.done = done
                return
            self.bar = click.progressbar(length=total, label="tune", file=sys.stderr)
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


def main(argv=None) -> None:
    """Console entry point: maps every outcome to the exit codes of design §5."""
    import os

    # pydantic scans every installed distribution for plugins on first use (5-8 ms measured
    # here); strobeplan uses none. setdefault keeps a user's own choice.
    os.environ.setdefault("PYDANTIC_DISABLE_PLUGINS", "__all__")
    args = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in args
    try:
        code = cli.main(args=args, prog_name="strobeplan", standalone_mode=False)
    except click.ClickException as exc:
        exc.show()
        sys.exit(exc.exit_code)
    except click.exceptions.Exit as exc:
        sys.exit(exc.exit_code)
    except click.Abort:
        click.echo("aborted", err=True)
        sys.exit(EXIT_INPUT)
    except BrokenPipeError:
        sys.exit(EXIT_OK)
    except SystemExit:
        raise
    except Exception as exc:  # noqa: BLE001 - the last line of defence
        if debug:
            import traceback

            traceback.print_exc()
        click.echo(f"internal error: {type(exc).__name__}: {exc}\n"
                   "This is a bug in strobeplan: please report it with the rig file "
                   "(run with --debug for a traceback).", err=True)
        sys.exit(EXIT_INTERNAL)
    sys.exit(code if isinstance(code, int) else EXIT_OK)


if __name__ == "__main__":
    main()
