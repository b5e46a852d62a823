"""`strobeplan analyse`: synthetic stacks made from the rig's own geometry, bad inputs, and
the outputs (nothing next to the inputs, the rig written with the measured offset).

The stacks follow the image model strobeplan/analyse.py states (tests/analyse_stacks.py):
their wavelength is the plan's (Cramer 1993 at the rig's air), their phase at the view the
schedule's image phase, shifted by an injected calibration offset.
"""

import json
import math
from dataclasses import replace

import numpy as np
import pytest
import tifffile

from strobeplan import load_rig, solve
from strobeplan.analyse import FrameError, analyse_frames, invert_abel
from strobeplan.rig import rig_from_dict
from strobeplan.solve import build_schedule
from strobeplan.viewgrid import view_grid
from tests.analyse_stacks import plane_stack
from tests.conftest import example, patched, run_cli


@pytest.fixture(scope="module")
def lev():
    rig = load_rig(example("levitator-40k"))
    plan = solve(rig)
    grid = replace(view_grid(rig, plan), nx=160, ny=128)
    phases = np.radians([r.achieved_phase_deg for r in build_schedule(plan).rows])
    return rig, plan, grid, phases


def _offset_deg(plan, offset_s):
    return 360.0 * plan.timing.drive_frequency_hz * offset_s


@pytest.mark.parametrize("kind", ["travelling", "standing"])
@pytest.mark.parametrize("offset_ns", [0.0, 1700.0, -4200.0])
def test_wavelength_phase_and_injected_offset(lev, kind, offset_ns):
    rig, plan, grid, phases = lev
    offset = offset_ns * 1e-9
    frames = plane_stack(rig, plan, grid, phases, kind=kind, offset_s=offset, noise=150.0,
                         contrast=0.03, seed=int(offset_ns) % 7)
    a = analyse_frames(rig, frames, plan=plan).summary
    lam = plan.air.speed_of_sound_m_s / plan.timing.drive_frequency_hz
    # the stack's wavelength is the plan's (Cramer 1993): within 1 %
    assert a["wave"]["kind"] == kind
    assert a["wave"]["wavelength_m"] == pytest.approx(lam, rel=0.01)
    # the phase at the view is the planned image phase minus the injected lag: within 3 deg
    want = a["view"]["planned_phase_deg"] - _offset_deg(plan, offset)
    got = a["view"]["measured_phase_deg"]
    assert abs((got - want + 180) % 360 - 180) < 3.0
    # the calibration offset recovered within 2 deg of the wave
    err = _offset_deg(plan, a["calibration"]["offset_s"] - offset)
    assert abs((err + 180) % 360 - 180) < 2.0
    assert a["calibration"]["uncertainty_s"] > 0


def test_plane_wave_pressure_through_the_cutoff_calibration(lev):
    """A stack whose contrast is the cutoff's slope times the plan's own deflection
    (eps = passes L K k p / c^2, Settles 2001; docs/references.md, "Acoustics and
    schlieren") gives back the plan's pressure amplitude at the view (2 %)."""
    rig, plan, grid, phases = lev
    from strobeplan.analyse import _cutoff

    _, sens, how = _cutoff(rig, plan)
    assert how == "geometry"
    eps = plan.optics.deflection_rad
    frames = plane_stack(rig, plan, grid, phases, contrast=sens * eps, noise=30.0)
    p = analyse_frames(rig, frames, plan=plan).summary["pressure"]
    assert p["plane_wave_at_view_pa"] == pytest.approx(p["planned_at_view_pa"], rel=0.02)
    assert p["plane_wave_uncertainty_pa"] < 0.02 * p["plane_wave_at_view_pa"]


def test_schardin_lens_calibration(lev):
    """A frame of a lens of focal length F (deflection -y/F, Settles 2001 ch. 10) sets the
    sensitivity: the contrast's slope across it gives back S = 4000 per rad."""
    rig, plan, grid, phases = lev
    focal, s_true = 200.0, 4000.0  # a weak lens: contrast within +-0.25 over the frame
    _, y = grid.offsets()
    lens = 20000.0 * (1 + s_true * (-y[:, None] / focal) * np.ones((1, grid.nx)))
    frames = plane_stack(rig, plan, grid, phases, noise=30.0, contrast=0.02)
    a = analyse_frames(rig, frames, plan=plan, flat=np.full(frames.shape[1:], 20000.0),
                       lens=(np.clip(np.rint(lens), 0, 65535).astype(np.uint16), focal)
                       ).summary
    assert a["deflection"]["method"] == "calibration lens"
    assert a["deflection"]["sensitivity_per_rad"] == pytest.approx(s_true, rel=0.01)
    # the travelling wave's peak contrast 0.02 is a deflection of 0.02 / S
    assert a["deflection"]["peak_rad"] == pytest.approx(0.02 / s_true, rel=0.02)


def test_oblique_wave_direction(lev):
    rig, plan, grid, phases = lev
    d = np.asarray(grid.v) * 0.8 + np.asarray(grid.u) * 0.6
    frames = plane_stack(rig, plan, grid, phases, direction=d, noise=100.0, offset_s=3e-6)
    a = analyse_frames(rig, frames, plan=plan).summary
    assert np.allclose(a["wave"]["direction"], d, atol=0.01)  # geometry of the stack
    err = _offset_deg(plan, a["calibration"]["offset_s"] - 3e-6)
    assert abs((err + 180) % 360 - 180) < 2.0


def test_speed_and_temperature_of_a_warmer_room(lev):
    rig, plan, grid, phases = lev
    from strobeplan.physics import air

    a_ = rig.air
    c30 = float(air.speed_of_sound(303.15, a_.relative_humidity, a_.pressure, a_.co2))
    f = plan.timing.drive_frequency_hz
    frames = plane_stack(rig, plan, grid, phases, wavelength=c30 / f, noise=50.0)
    w = analyse_frames(rig, frames, plan=plan).summary["wave"]
    # Cramer (1993) at 30 degC, the rig's humidity: the wave's speed gives back 30 degC
    assert w["speed_of_sound_m_s"] == pytest.approx(c30, rel=0.002)
    assert w["air_temperature_c"] == pytest.approx(30.0, abs=1.0)


def test_aliasing_finding_from_a_strong_third_harmonic(lev):
    """Surrel (1996): with 4 equal steps the third harmonic aliases onto the fundamental
    (3 = -1 mod 4); 8 steps resolve it."""
    rig, plan, grid, _ = lev
    codes = {}
    for n in (4, 8):
        phases = np.arange(n) * 2 * math.pi / n
        frames = plane_stack(rig, plan, grid, phases, noise=20.0, harmonic3=0.4)
        a = analyse_frames(rig, frames, np.degrees(phases), plan=plan)
        codes[n] = [f["code"] for f in a.summary["findings"]]
        if n == 4:
            assert 3 in a.summary["aliasing"]["aliased_orders"]
    assert "analyse.aliasing" in codes[4]
    assert "analyse.aliasing" not in codes[8]


def test_rod_stop_measures_the_wave_from_its_second_harmonic():
    """A dark-field stop responds to eps^2: the image shows the wave at twice its spatial
    frequency (Settles 2001, sec. 3.5); the wavelength and the phase (modulo 180 deg) are
    still measured."""
    from strobeplan.rig import rig_from_dict
    from tests.conftest import patched

    rig = rig_from_dict(patched("levitator-40k", {"optics.cutoff": "rod",
                                                  "optics.cutoff_width": "1.2 mm"}))
    plan = solve(rig)
    grid = replace(view_grid(rig, plan), nx=160, ny=128)
    phases = np.radians([r.achieved_phase_deg for r in build_schedule(plan).rows])
    frames = plane_stack(rig, plan, grid, phases, rod=True, contrast=0.5, noise=20.0,
                         background=2000.0, offset_s=1.5e-6)
    a = analyse_frames(rig, frames, plan=plan).summary
    lam = plan.air.speed_of_sound_m_s / plan.timing.drive_frequency_hz
    assert a["demodulation"]["signal_order"] == 2
    assert a["wave"]["wavelength_m"] == pytest.approx(lam, rel=0.01)
    err = _offset_deg(plan, a["calibration"]["offset_s"] - 1.5e-6)
    assert abs((err + 180) % 360 - 180) < 2.0
    assert a["pressure"] is None


def test_preview_sidecar_gives_the_phases(lev, tmp_path):
    """A folder written by `strobeplan preview` (frame_000.tif ... and preview.json with
    phases_deg) analyses directly, whatever its frame count."""
    rig, plan, grid, _ = lev
    phases_deg = np.arange(12) * 30.0 + 5.0
    frames = plane_stack(rig, plan, grid, np.radians(phases_deg), noise=50.0, offset_s=1e-6)
    folder = _write_frames(tmp_path / "preview", frames)
    (folder / "preview.json").write_text(json.dumps({"phases_deg": list(phases_deg)}))
    r = run_cli("analyse", example("levitator-40k"), str(folder / "frame_*.tif"), "--json")
    assert r.exit_code == 0, r.output
    j = json.loads(r.stdout)
    assert "preview.json" in j["frames"]["phases_from"]
    err = _offset_deg(plan, j["calibration"]["offset_s"] - 1e-6)
    assert abs((err + 180) % 360 - 180) < 2.0


def test_plan_reports_the_minimum_steps_for_its_cutoff():
    from tests.conftest import plan_of

    # a knife in its linear range: the fundamental only, 3 steps (Surrel 1996: 2 m + 1)
    assert plan_of("levitator-40k").image.min_phase_steps == 3
    # a knife clipped far beyond its range: odd harmonics, more steps; fewer in the sweep
    # give the rule's warning
    clipped = plan_of("levitator-40k", {"optics.cut_fraction": 0.97, "sweep.steps": 6})
    assert clipped.image.min_phase_steps > 6
    assert "image.steps_alias" in [f.code for f in clipped.findings]


def test_abel_inversion_of_a_gaussian_core():
    """The Abel pair exp(-r^2/s^2) <-> sqrt(pi) s exp(-y^2/s^2) (R. N. Bracewell, The Fourier
    Transform and its Applications, 3rd ed. (2000), ch. 14): within 3 % on the core."""
    pix, s = 1e-4, 4e-3
    y = np.arange(200) * pix
    rows = np.array([1.0, 0.5 - 0.8j, -0.3j])
    proj = rows[:, None] * (math.sqrt(math.pi) * s * np.exp(-(y / s) ** 2))[None, :]
    f = invert_abel(proj, pix)
    core = y < s
    want = rows[:, None] * np.exp(-(y / s) ** 2)[None, :]
    assert np.max(np.abs(f[:, core] - want[:, core]) / np.abs(rows)[:, None]) < 0.03


def test_abel_pressure_of_an_axisymmetric_beam(lev):
    """An axisymmetric Gaussian beam travelling up the emitter's axis: the Abel-inverted
    pressure on the axis at the view matches the field put in (3 %)."""
    _, _, _, phases = lev
    from strobeplan.stages.field import view_point
    from strobeplan.stages.optics import gladstone_dale

    # frames of 200 x 128 pixels centred on the view point (the example's [view] frames the
    # whole column, centred lower)
    rig = rig_from_dict(patched("levitator-40k", {"view.centre": ["0 mm", "0 mm", "60 mm"]}))
    plan = solve(rig)
    grid = view_grid(rig, plan)

    opt = rig.optics
    f = plan.timing.drive_frequency_hz
    c = plan.air.speed_of_sound_m_s
    k = 2 * math.pi * f / c
    width = 4e-3
    p0 = 600.0
    g = replace(grid, nx=200, ny=128)
    pts = g.points() - view_point(rig)
    u = pts @ g.u
    v = pts @ g.v
    kk = gladstone_dale(rig)
    from strobeplan.analyse import _cutoff

    _, sens, _ = _cutoff(rig, plan)
    # projection of p = p0 exp(-r^2/w^2) exp(-i k v) along the light: sqrt(pi) w p0 ...
    proj = math.sqrt(math.pi) * width * p0 * np.exp(-(u / width) ** 2) * np.exp(-1j * k * v)
    grad = -1j * k * proj  # d/dv
    contrast = sens * opt.passes * kk / c**2 * grad
    frames = np.stack([np.rint(20000 * (1 + np.imag(contrast * np.exp(1j * phi))))
                       for phi in phases]).astype(np.uint16)
    a = analyse_frames(rig, frames, plan=plan, snr_threshold=3.0).summary
    assert a["pressure"]["abel_at_view_pa"] == pytest.approx(p0, rel=0.03)


# --- inputs and outputs ----------------------------------------------------------------------


def _write_frames(folder, frames, fmt="tif"):
    import imageio.v3 as iio

    folder.mkdir(parents=True, exist_ok=True)
    for i, f in enumerate(frames):
        if fmt == "tif":
            tifffile.imwrite(folder / f"frame_{i:03d}.tif", f)
        else:
            iio.imwrite(folder / f"frame_{i:03d}.png", f)
    return folder


@pytest.fixture(scope="module")
def stack_dir(tmp_path_factory, lev):
    rig, plan, grid, phases = lev
    frames = plane_stack(rig, plan, grid, phases, noise=100.0, offset_s=2e-6)
    folder = _write_frames(tmp_path_factory.mktemp("frames") / "in", frames)
    return folder, frames


def _listing(folder):
    return sorted(p.name for p in folder.parent.rglob("*"))


def test_cli_reads_a_folder_a_glob_and_a_multipage_tiff(stack_dir, tmp_path, lev):
    folder, frames = stack_dir
    rig_path = example("levitator-40k")
    before = _listing(folder)
    r1 = run_cli("analyse", rig_path, folder, "--json")
    r2 = run_cli("analyse", rig_path, str(folder / "frame_*.tif"), "--json")
    multi = tmp_path / "stack.tif"
    tifffile.imwrite(multi, frames)
    r3 = run_cli("analyse", rig_path, multi, "--json")
    assert r1.exit_code == r2.exit_code == r3.exit_code == 0, r1.output + r2.output
    j1, j2, j3 = (json.loads(r.stdout) for r in (r1, r2, r3))
    assert j1["calibration"]["offset_s"] == j2["calibration"]["offset_s"] == \
        j3["calibration"]["offset_s"]
    assert _listing(folder) == before  # nothing written next to the inputs


def test_cli_outputs_and_write_rig(stack_dir, tmp_path):
    folder, _ = stack_dir
    src = tmp_path / "rig.toml"
    src.write_text(example("levitator-40k").read_text())
    out = tmp_path / "out"
    new_rig = tmp_path / "measured.toml"
    before = _listing(folder)
    r = run_cli("analyse", src, folder, "-o", out, "--write-rig", new_rig)
    assert r.exit_code == 0, r.output
    names = {p.name for p in out.iterdir()}
    assert {"analyse.json", "amplitude.png", "phase.png", "amplitude.tif",
            "phase_deg.tif"} <= names
    amp = tifffile.imread(out / "amplitude.tif")
    assert amp.dtype == np.float32 and amp.shape == (128, 160)
    assert (out / "phase.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    text = new_rig.read_text()
    assert "calibration_offset" in text
    assert "# the levitator's concave-ground reflector" in text  # comments kept
    measured = json.loads((out / "analyse.json").read_text())["calibration"]["offset_s"]
    assert load_rig(new_rig).strobe.calibration_offset == pytest.approx(measured, rel=1e-9)
    assert run_cli("check", new_rig).exit_code in (0, 1)  # it reads and solves
    assert _listing(folder) == before


def test_no_wave_writes_no_rig(tmp_path):
    # blank frames: no pixel passes the SNR mask, so there is no offset to write (exit 2,
    # one line) and nothing at all is written
    folder = tmp_path / "blank"
    _write_frames(folder, np.zeros((8, 40, 50), np.uint16))
    out, new_rig = tmp_path / "out", tmp_path / "new.toml"
    r = run_cli("analyse", example("levitator-40k"), folder, "--phases",
                ",".join(str(45 * i) for i in range(8)), "-o", out, "--write-rig", new_rig)
    assert "no calibration offset was measured" in _one_line_error(r)
    assert not out.exists() and not new_rig.exists()
    r = run_cli("analyse", example("levitator-40k"), folder, "--phases",
                ",".join(str(45 * i) for i in range(8)), "--json")
    assert r.exit_code == 0
    assert [f["code"] for f in json.loads(r.stdout)["findings"]] == ["analyse.no_wave"]


def test_colour_png_frames_are_reduced_to_luma(lev, tmp_path):
    rig, plan, grid, phases = lev
    grey = plane_stack(rig, plan, grid, phases, noise=0.0, offset_s=1e-6, dtype=np.uint8,
                       background=120.0, contrast=0.2)
    # ITU-R BT.709 luma weights sum to 1: equal R, G, B give back the grey level
    rgb = np.repeat(grey[..., None], 3, axis=-1)
    folder = _write_frames(tmp_path / "rgb", rgb, fmt="png")
    r = run_cli("analyse", example("levitator-40k"), folder, "--json")
    assert r.exit_code == 0, r.output
    j = json.loads(r.stdout)
    assert "BT.709" in j["frames"]["colour"] and j["frames"]["bit_depth"] == 8
    err = _offset_deg(plan, j["calibration"]["offset_s"] - 1e-6)
    assert abs((err + 180) % 360 - 180) < 2.0


def test_dark_and_flat_frames(lev, tmp_path):
    rig, plan, grid, phases = lev
    frames = plane_stack(rig, plan, grid, phases, noise=50.0, background=20000.0)
    dark = np.full(frames.shape[1:], 500, np.uint16)
    flat = np.full(frames.shape[1:], 20500, np.uint16)
    a0 = analyse_frames(rig, frames, plan=plan).summary
    a1 = analyse_frames(rig, (frames + 500).astype(np.uint16), plan=plan, dark=dark,
                        flat=flat).summary
    # the dark level is removed and the flat is the background: the same contrast
    assert a1["deflection"]["peak_rad"] == pytest.approx(a0["deflection"]["peak_rad"],
                                                         rel=0.01)
    assert a1["frames"]["dark"] and a1["frames"]["flat"]


def _one_line_error(r):
    assert r.exit_code == 2, r.output
    lines = [x for x in r.output.splitlines() if x.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: "), r.output
    return lines[0]


def test_bad_inputs_exit_2_with_one_line(stack_dir, tmp_path):
    folder, frames = stack_dir
    rig = example("levitator-40k")
    junk = tmp_path / "junk.tif"
    junk.write_bytes(b"not an image at all")
    assert "cannot be read" in _one_line_error(run_cli("analyse", rig, junk))
    small = tmp_path / "small"
    _write_frames(small, frames[:3])
    assert "at least 4" in _one_line_error(run_cli("analyse", rig, small, "--phases",
                                                   "0,120,240"))
    mixed = tmp_path / "mixed"
    _write_frames(mixed, frames[:5])
    tifffile.imwrite(mixed / "frame_005.tif", frames[5][:-1])
    assert "expected 160 x 128" in _one_line_error(
        run_cli("analyse", rig, mixed, "--phases", "0,60,120,180,240,300"))
    assert "--phases: 3 values for 36 frames" in _one_line_error(
        run_cli("analyse", rig, folder, "--phases", "0,10,20"))
    assert "schedule has 36 rows" in _one_line_error(run_cli("analyse", rig, small))
    assert "no such file" in _one_line_error(run_cli("analyse", rig, tmp_path / "nope.tif"))
    assert "matches no file" in _one_line_error(run_cli("analyse", rig,
                                                        str(tmp_path / "none_*.tif")))
    floats = tmp_path / "f.tif"
    tifffile.imwrite(floats, np.zeros((4, 8, 8), np.float32), photometric="minisblack")
    assert "8- or 16-bit" in _one_line_error(run_cli("analyse", rig, floats, "--phases",
                                                     "0,90,180,270"))
    assert "not a folder" in _one_line_error(run_cli("analyse", rig, folder, "-o", junk))
    dark = tmp_path / "dark.tif"
    tifffile.imwrite(dark, np.zeros((5, 5), np.uint16))
    assert "--dark" in _one_line_error(run_cli("analyse", rig, folder, "--dark", dark))
    with pytest.raises(FrameError):
        analyse_frames(load_rig(rig), frames[:2], [0, 180])


@pytest.mark.slow  # the report runs the design search for its trade-off plot (~4 s)
def test_report_adds_measured_against_planned(stack_dir, tmp_path):
    folder, _ = stack_dir
    out = tmp_path / "r.html"
    r = run_cli("report", example("levitator-40k"), "-o", out, "--frames", folder)
    assert r.exit_code in (0, 1), r.output
    page = out.read_text()
    assert 'id="measured"' in page and "Measured against planned" in page
    assert "strobe.calibration_offset" in page


def test_schedule_says_when_its_steps_cannot_separate_the_cutoffs_harmonics(tmp_path):
    # A rod stop answers at the second harmonic: N steps resolve harmonics up to (N - 1)/2
    # (the sampling theorem over one period), so 4 steps are too few, 5 enough.
    from tests.test_export import _toml

    rig = tmp_path / "rod.toml"
    rig.write_text(_toml(patched("levitator-40k", {"optics.cutoff": "rod",
                                                   "optics.cutoff_width": "0.6 mm"})))
    few = run_cli("schedule", rig, "--steps", "4")
    assert few.exit_code == 0
    assert "needs at least 5" in few.stderr and "image.min_phase_steps" in few.stderr
    assert few.stdout.count("\n") == 5  # the header and four rows, untouched
    enough = run_cli("schedule", rig, "--steps", "5")
    assert "min_phase_steps" not in enough.stderr


# --- outside stacks: few cycles, the frames' scale, plane frames on a rig with a field -----


@pytest.mark.parametrize("kind", ["travelling", "standing"])
@pytest.mark.parametrize("pixels", [64, 128])
def test_pictures_of_less_than_two_wavelengths(lev, kind, pixels):
    # 64 pixels of 0.1 mm hold 0.74 of the 8.6 mm wave: the spectrum's peak sits among the
    # lowest bins and only the fit locates it (plane stacks: the wavelength is the plan's)
    rig, plan, grid, phases = lev
    g = replace(grid, nx=pixels, ny=pixels, pixel_m=1e-4)
    d = np.asarray(grid.v) * 0.8 + np.asarray(grid.u) * 0.6
    frames = plane_stack(rig, plan, g, phases, kind=kind, noise=50.0, direction=d,
                         los_phase=0.0)
    w = analyse_frames(rig, frames, plan=plan, pixel_m=1e-4).summary["wave"]
    lam = plan.air.speed_of_sound_m_s / plan.timing.drive_frequency_hz
    assert w["kind"] == kind
    assert w["wavelength_m"] == pytest.approx(lam, rel=0.01)
    along = abs(float(np.dot(w["direction"], d)))
    assert along == pytest.approx(1.0, abs=2e-3)  # within 3.6 deg of the stack's direction
    assert w["wavelength_uncertainty_m"] < 0.01 * lam


def test_plane_frames_on_a_rig_with_a_field_are_measured_as_they_are(lev):
    # a plane standing wave is no picture of the levitator's field: the plane pair explains
    # it, so no model correction is made and the wavelength is the stack's own
    rig, plan, grid, phases = lev
    frames = plane_stack(rig, plan, grid, phases, kind="standing", noise=0.0,
                         dtype=np.uint8, background=120.0, contrast=0.2)
    w = analyse_frames(rig, frames, plan=plan).summary["wave"]
    assert not w["wavelength_model"]["applied"]
    lam = plan.air.speed_of_sound_m_s / plan.timing.drive_frequency_hz
    assert w["wavelength_m"] == pytest.approx(lam, rel=0.002)


def _bare_rig(view):
    raw = {"name": "bare", "wave": {"frequency": "40 kHz"},
           "controller": {"clock": "16 MHz"}, "strobe": {"pulse_width": "0.5 us"},
           "sweep": {"steps": 12}}
    if view:
        raw["view"] = view
    return rig_from_dict(raw)


def _plain_stack(n_y, n_x, pixel, lam, phases, seed=0):
    # the frames of a wave moving up the picture, contrast 0.05 on 20000 grey, noise 40:
    # written here from the formula, not from the rig
    rng = np.random.default_rng(seed)
    y = ((n_y - 1) / 2 - np.arange(n_y))[:, None] * pixel * np.ones((1, n_x))
    k = 2 * math.pi / lam
    out = [20000 * (1 + 0.05 * np.sin(phi - k * y)) + rng.normal(0, 40, y.shape)
           for phi in phases]
    return np.clip(np.rint(out), 0, 65535).astype(np.uint16)


def test_the_frames_scale_comes_from_the_view_they_show():
    rig = _bare_rig({"centre": ["0 mm", "0 mm", "0 mm"], "width": "60 mm",
                     "height": "40 mm"})
    plan = solve(rig)
    lam = plan.air.speed_of_sound_m_s / 40e3
    phases = np.radians(np.arange(12) * 30.0)
    frames = _plain_stack(400, 600, 1e-4, lam, phases)  # 600 pixels across 60 mm
    a = analyse_frames(rig, frames, np.degrees(phases), plan=plan).summary
    assert a["grid"]["pixel_m"] == pytest.approx(1e-4, rel=1e-12)
    assert "view's width" in a["grid"]["pixel_from"]
    assert a["wave"]["wavelength_m"] == pytest.approx(lam, rel=0.005)
    assert "analyse.scale_unknown" not in {f["code"] for f in a["findings"]}
    # --pixel-size wins over the view
    b = analyse_frames(rig, frames, np.degrees(phases), plan=plan, pixel_m=2e-4).summary
    assert b["wave"]["wavelength_m"] == pytest.approx(2 * lam, rel=0.005)
    with pytest.raises(FrameError, match="--pixel-size"):
        analyse_frames(rig, frames, np.degrees(phases), plan=plan, pixel_m=-1.0)


def test_an_unknown_scale_is_a_finding():
    rig = _bare_rig(None)
    plan = solve(rig)
    phases = np.radians(np.arange(12) * 30.0)
    frames = _plain_stack(96, 128, 1e-4, 3e-3, phases)
    a = analyse_frames(rig, frames, np.degrees(phases), plan=plan).summary
    assert "analyse.scale_unknown" in {f["code"] for f in a["findings"]}
    assert a["grid"]["pixel_from"].startswith("a guess")


def test_pixel_size_option(tmp_path):
    rig = example("levitator-40k")
    r = run_cli("analyse", rig, str(tmp_path / "none.tif"), "--pixel-size", "-3 um")
    assert r.exit_code == 2 and "--pixel-size" in _one_line_error(r)


def _codes(rig, frames, phases_deg, plan):
    return {f["code"] for f in analyse_frames(rig, frames, phases_deg, plan=plan)
            .summary["findings"]}


def test_every_analyse_finding_is_reachable(lev):
    """Each registered finding (ANALYSE_RULES, listed in docs/findings.md) is raised by a
    stack made for it, and every code raised is registered."""
    from strobeplan.analyse import ANALYSE_RULES

    rig, plan, grid, phases = lev
    deg = np.degrees(phases)
    seen = {
        "analyse.clipped": _codes(rig, plane_stack(rig, plan, grid, phases, background=63000.0,
                                                   contrast=0.05, noise=20.0), deg, plan),
        "analyse.aliasing": _codes(rig, plane_stack(rig, plan, grid, np.arange(4) * math.pi / 2,
                                                    noise=20.0, harmonic3=0.4),
                                   np.arange(4) * 90.0, plan),
        "analyse.no_wave": _codes(rig, np.zeros((len(phases), 40, 50), np.uint16), deg, plan),
        # 3.4 deg off the knife edge: the knife sees 6 % of the gradient
        "analyse.along_knife": _codes(rig, plane_stack(
            rig, plan, grid, phases, noise=20.0, contrast=0.2,
            direction=np.asarray(grid.u) + 0.06 * np.asarray(grid.v)), deg, plan),
        "analyse.calibration": _codes(rig, plane_stack(rig, plan, grid, phases, noise=20.0,
                                                       offset_s=3e-6), deg, plan),
    }
    bare = _bare_rig(None)
    bare_plan = solve(bare)
    seen["analyse.scale_unknown"] = _codes(bare, _plain_stack(96, 128, 1e-4, 3e-3, phases),
                                           deg, bare_plan)
    registered = {r.code for r in ANALYSE_RULES}
    assert set(seen) == registered
    for code, codes in seen.items():
        assert code in codes, (code, codes)
        assert codes <= registered


def test_a_stack_above_the_budget_is_refused_before_the_work(tmp_path, monkeypatch):
    from strobeplan import workload

    folder = _write_frames(tmp_path / "f", np.full((6, 30, 40), 1000, np.uint16))
    monkeypatch.setattr(workload, "MAX_PIXEL_FRAMES", 6 * 30 * 40 - 1)
    r = run_cli("analyse", example("levitator-40k"), folder, "--phases",
                ",".join(str(60 * i) for i in range(6)))
    line = _one_line_error(r)
    assert "frame-pixels" in line and "budget" in line


@pytest.mark.parametrize("kind", ["travelling", "standing"])
def test_flash_to_flash_light_changes_leave_a_uniform_phasor(lev, kind):
    """Frames whose light changes from one to the next by 1 % rms (flash energy, camera gain)
    carry on their first-harmonic map the same complex number at every pixel: the first
    harmonic of the gain series, fitted here independently with numpy's least squares on
    the same basis as the demodulation (Greivenkamp 1984: 1, cos m phi, sin m phi). analyse
    fits and removes it: the wavelength within 0.2 % and the phase within 3 deg."""
    rig, plan, grid, phases = lev
    frames = plane_stack(rig, plan, grid, phases, kind=kind, noise=50.0, contrast=0.03,
                         seed=1, offset_s=2e-6).astype(float)
    gain = 1 + np.random.default_rng(7).normal(0, 0.01, len(phases))
    frames = np.clip(np.rint(frames * gain[:, None, None]), 0, 65535).astype(np.uint16)
    a = analyse_frames(rig, frames, plan=plan).summary
    lam = plan.air.speed_of_sound_m_s / plan.timing.drive_frequency_hz
    assert a["wave"]["wavelength_m"] == pytest.approx(lam, rel=0.002)
    want = a["view"]["planned_phase_deg"] - _offset_deg(plan, 2e-6)
    got = a["view"]["measured_phase_deg"]
    assert abs((got - want + 180) % 360 - 180) < 3.0
    basis = np.stack([np.ones_like(phases), np.cos(phases), np.sin(phases),
                      np.cos(2 * phases), np.sin(2 * phases)], axis=1)
    coef = np.linalg.lstsq(basis, gain / gain.mean(), rcond=None)[0]
    expected = complex(coef[2], coef[1])  # Im[Z exp(i phi)] = a cos phi + b sin phi
    got_u = complex(*a["wave"]["uniform_contrast"])
    assert abs(got_u - expected) < 0.1 * abs(expected)
    # the rest of the gain series is taken out frame by frame: its rms is the series' own
    # (1 % drawn; the sample's scatter about its harmonic fit, computed here)
    assert a["frames"]["levels_normalised"]
    resid = gain / gain.mean() - basis @ coef
    sample = math.sqrt(float(resid @ resid) / (len(phases) - basis.shape[1]))
    assert a["frames"]["level_changes_rms"] == pytest.approx(sample, rel=0.1)
    # steady light: nothing is normalised
    steady = analyse_frames(rig, plane_stack(rig, plan, grid, phases, kind=kind, noise=50.0,
                                             contrast=0.03, seed=1), plan=plan).summary
    assert not steady["frames"]["levels_normalised"]


def test_two_percent_light_changes_keep_the_wave(lev):
    # at 2 % rms the changes swamp each pixel's noise estimate (50 grey of noise against
    # 400 of light change) unless the frames are divided by their levels
    rig, plan, grid, phases = lev
    lam = plan.air.speed_of_sound_m_s / plan.timing.drive_frequency_hz
    for seed in range(3):
        frames = plane_stack(rig, plan, grid, phases, kind="standing", noise=50.0,
                             contrast=0.03, seed=seed).astype(float)
        gain = 1 + np.random.default_rng(100 + seed).normal(0, 0.02, len(phases))
        frames = np.clip(np.rint(frames * gain[:, None, None]), 0, 65535).astype(np.uint16)
        a = analyse_frames(rig, frames, plan=plan).summary
        assert a["wave"]["wavelength_m"] == pytest.approx(lam, rel=0.002)
        assert abs(a["view"]["phase_difference_deg"]) < 3.0
