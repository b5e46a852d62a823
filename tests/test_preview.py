"""strobeplan preview: frames from the field model through the cutoff, light and camera."""

import json

import numpy as np
import pytest

from strobeplan.physics import camera as cam_model
from strobeplan.preview import PREVIEW_RULES, render_preview, write_preview
from strobeplan.rig import rig_from_dict
from strobeplan.solve import build_schedule, solve
from strobeplan.stages.field import pressure_at

from .conftest import patched, run_cli


def _render(base, patch=None, **kw):
    rig = rig_from_dict(patched(base, patch or {}))
    plan = solve(rig)
    return rig, plan, render_preview(rig, plan, **kw)


@pytest.fixture(scope="module")
def levitator():
    return _render("levitator-40k", noise=False)


def _dominant_cycles(signal):
    spec = np.abs(np.fft.rfft(signal - signal.mean()))
    spec[0] = 0
    return int(np.argmax(spec))


def test_knife_and_rod_dominant_frequency_is_two_to_one():
    # Settles (2001), sec. 3.5: a centred rod (dark field) answers |eps|, so the wave shows
    # at twice its spatial frequency; the knife edge answers eps. FFT of the picture's line
    # along the wave (a column here: the standing wave runs along "up").
    common = {"view.height": "60 mm", "view.centre": ["0 mm", "0 mm", "32 mm"]}
    _, _, knife = _render("levitator-40k", common, frames=2, noise=False)
    _, _, rod = _render("levitator-40k", {**common, "optics.cutoff": "rod",
                                          "optics.cutoff_width": "1 mm"},
                        frames=2, noise=False)
    col = knife.frames.shape[2] // 2
    ratio = [_dominant_cycles(rod.frames[k, :, col].astype(float))
             / _dominant_cycles(knife.frames[k, :, col].astype(float)) for k in range(2)]
    assert ratio == pytest.approx([2.0, 2.0], abs=0.15)


def test_flat_region_noise_matches_the_camera_model():
    # EMVA 1288 (2021), eq. 7: sigma^2 = mu_e + read^2 + q^2/12 (strobeplan.physics.camera)
    # A wave far below visibility leaves a flat frame; its pixel spread over three seeds.
    rig, plan, _ = _render("levitator-40k", {"emitter.spl_at_view": "60 dB"}, frames=1)
    stds, means = [], []
    for seed in (0, 1, 2):
        pv = render_preview(rig, plan, frames=1, seed=seed)
        block = pv.frames[0].astype(float)
        stds.append(block.std())
        means.append(block.mean())
    full = 2**rig.camera.bit_depth - 1
    mean_e = np.mean(means) / full * rig.camera.full_well
    model = cam_model.noise(mean_e, rig.camera.read_noise, rig.camera.full_well,
                            rig.camera.bit_depth) * full / rig.camera.full_well
    assert np.mean(stds) == pytest.approx(model, rel=0.05)


def test_reruns_are_byte_identical(tmp_path):
    rig = rig_from_dict(patched("levitator-40k", {"view.height": "20 mm"}))
    plan = solve(rig)
    names = []
    for d in ("a", "b"):
        names.append(write_preview(render_preview(rig, plan, frames=3, seed=7), tmp_path / d))
    assert names[0] == names[1] and "preview.json" in names[0] and "loop.gif" in names[0]
    for name in names[0]:
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()
    other = render_preview(rig, plan, frames=3, seed=8)
    assert not np.array_equal(other.frames, render_preview(rig, plan, frames=3,
                                                           seed=7).frames)


def test_pixel_follows_the_schedule_phases(levitator):
    rig, plan, pv = levitator
    rows = build_schedule(plan).rows
    assert np.allclose(pv.phases_deg, [r.achieved_phase_deg for r in rows])
    # The grey level of a pixel is a sinusoid in the schedule's image phases (knife edge,
    # linear range): fit a + b cos(phi) + c sin(phi) (least squares); the residual stays at
    # the quantisation level and the fitted phase is the map's phase at that pixel.
    r, c = np.unravel_index(np.argmax(np.abs(pv.deflection)), pv.deflection.shape)
    g = pv.frames[:, r, c].astype(float)
    phi = np.radians(pv.phases_deg)
    basis = np.stack([np.ones_like(phi), np.cos(phi), np.sin(phi)], axis=1)
    coef, *_ = np.linalg.lstsq(basis, g, rcond=None)
    resid = g - basis @ coef
    amp = np.hypot(coef[1], coef[2])
    assert amp > 20 and np.sqrt(np.mean(resid**2)) < 1.0 + 0.02 * amp
    fitted = np.angle(coef[1] - 1j * coef[2])  # g ~ amp cos(phi + fitted)
    theta = np.radians(pv.summary["pressure_phase_at_view_deg"])
    expected = np.angle(pv.deflection[r, c]) - np.pi / 2 - theta
    assert abs(np.angle(np.exp(1j * (fitted - expected)))) < np.radians(2.0)


def _axis_minima(values, z):
    i = np.where((values[1:-1] < values[:-2]) & (values[1:-1] < values[2:]))[0] + 1
    return z[i]


def test_levitator_cells_sit_at_the_field_models_nodes_and_move_with_the_sweep(levitator):
    rig, plan, pv = levitator
    grid = pv.grid
    col = grid.nx // 2
    _, y = grid.offsets()
    z = grid.centre[2] + y
    # Field model (strobeplan.stages.field.pressure_at, Rayleigh integral plus images):
    # pressure nodes along the axis between transducer and reflector
    line = grid.centre + np.outer(y, grid.v)
    p_axis = np.abs(pressure_at(rig, line, rig.wave.frequency,
                                speed=plan.air.speed_of_sound_m_s)[0])
    inside = (z > 10e-3) & (z < 60e-3)  # past the piston's near field
    nodes_model = np.sort(_axis_minima(np.where(inside, p_axis, np.inf), z))
    # the picture: the knife's signal |eps| = |dQ/dz| peaks where the pressure varies
    # fastest, i.e. it vanishes at the pressure antinodes and peaks at the nodes
    eps = np.abs(pv.deflection[:, col])
    peaks = _axis_minima(np.where(inside, -eps, np.inf), z)
    lam = plan.air.speed_of_sound_m_s / rig.wave.frequency
    assert len(nodes_model) >= 9
    # nodes lambda/2 apart (a standing wave; Kinsler et al. 2000, sec. 10.2)
    assert np.allclose(np.diff(nodes_model), lam / 2, rtol=0.05)
    near = [np.min(np.abs(peaks - n)) for n in nodes_model]
    assert max(near) < lam / 16
    # with the sweep the cells brighten and fade: the column's contrast follows |cos| of
    # the image phase (a standing wave oscillates in place)
    contrast = pv.frames[:, :, col].astype(float).std(axis=1)
    phi = np.radians(pv.phases_deg)
    best = max(np.corrcoef(contrast, np.abs(np.cos(phi - a)))[0, 1]
               for a in np.radians(np.arange(0, 180, 5)))
    assert best > 0.95 and contrast.max() > 3 * contrast.min()


def test_opposed_pair_fringes_at_the_geometric_positions():
    # Two in-phase emitters facing each other 100 mm apart: equal paths at the midpoint
    # (an antinode), pressure nodes where the path difference is an odd number of half
    # wavelengths: z = 50 mm +- (2m + 1) lambda / 4 (geometry of two counter-propagating
    # waves, Kinsler et al. 2000, sec. 10.2)
    rig, plan, pv = _render("opposed-pair-40k", {"emitter": [
        {**patched("opposed-pair-40k", {})["emitter"][0]},
        {**patched("opposed-pair-40k", {})["emitter"][1], "resonance": "40.0 kHz"}]},
        frames=1, noise=False)
    grid = pv.grid
    _, y = grid.offsets()
    z = grid.centre[2] + y
    lam = plan.air.speed_of_sound_m_s / rig.wave.frequency
    eps = np.abs(pv.deflection[:, grid.nx // 2])
    near_mid = np.abs(z - 0.05) < 12e-3
    peaks = _axis_minima(np.where(near_mid, -eps, np.inf), z)
    expected = 0.05 + (2 * np.arange(-3, 3) + 1) * lam / 4
    expected = expected[np.abs(expected - 0.05) < 11e-3]
    assert len(peaks) == len(expected)
    assert np.allclose(np.sort(peaks), np.sort(expected), atol=lam / 20)


@pytest.mark.parametrize("code,base,patch", [
    ("preview.cutoff_saturated", "levitator-40k", {"emitter.spl_at_view": "176 dB"}),
    ("preview.below_snr", "levitator-40k", {"emitter.spl_at_view": "125 dB"}),
    ("preview.double_image", "rangefinder-58k", {
        "optics.source_separation": "20 mm", "view.width": "30 mm", "view.height": "20 mm",
        "view.depth": "30 mm"}),
    ("preview.light_sampling", "levitator-40k", {"view.samples": 4}),
    ("preview.view_sampling", "opposed-pair-40k", {"optics": None, "view.width": "800 mm",
                                                   "view.depth": "5 mm", "view.samples": 2}),
    ("preview.no_image_chain", "opposed-pair-40k", {"optics": None}),
])
def test_each_preview_finding_triggers(code, base, patch):
    _, _, pv = _render(base, patch, frames=2, noise=False)
    codes = [f.code for f in pv.findings]
    assert code in codes
    f = pv.findings[codes.index(code)]
    assert f.hint and f.message and f.severity in ("note", "warning")


def test_every_preview_rule_is_tested():
    params = next(m for m in test_each_preview_finding_triggers.pytestmark
                  if m.name == "parametrize").args[1]
    assert {r.code for r in PREVIEW_RULES} == {p[0] for p in params}


def test_cli_writes_the_files_and_json(tmp_path):
    out = tmp_path / "new" / "dir"
    res = run_cli("preview", "configs/levitator-40k.toml", "-o", out, "--frames", "4",
                  "--seed", "3")
    assert res.exit_code == 0, res.output
    doc = json.loads((out / "preview.json").read_text())
    assert len(doc["phases_deg"]) == 4 and doc["frames"] == 4
    for key in ("peak_pressure_pa", "peak_deflection_rad", "grey_min", "grey_max",
                "fraction_saturated", "fraction_below_snr", "fraction_cutoff_saturated"):
        assert key in doc
    import tifffile
    from PIL import Image

    tif = tifffile.imread(out / "frame_003.tif")
    assert tif.dtype == np.uint16 and tif.max() <= 1023  # 10-bit camera
    assert Image.open(out / "frame_003.png").mode == "L"
    assert Image.open(out / "loop.gif").n_frames == 4
    assert (out / "contact_sheet.png").stat().st_size > 0


@pytest.mark.parametrize("args,needle", [
    (["-o", "configs/levitator-40k.toml"], "not a folder"),
    (["-o", "/dev/null"], "not a folder"),
    (["-o", "/proc/x"], "/proc"),
    (["--frames", "0", "-o", "X"], "--frames"),
])
def test_cli_refuses_bad_targets(args, needle, tmp_path):
    args = [a if a != "X" else str(tmp_path / "x") for a in args]
    res = run_cli("preview", "configs/levitator-40k.toml", *args)
    assert res.exit_code == 2 and needle in res.output and "Traceback" not in res.output


def test_cli_estimate_refusal(tmp_path):
    raw = (tmp_path / "big.toml")
    text = open("configs/levitator-40k.toml").read().replace(
        'width = "48 mm"', 'width = "2 m"').replace('height = "72 mm"', 'height = "2 m"')
    raw.write_text(text)
    res = run_cli("preview", raw, "-o", tmp_path / "out")
    assert res.exit_code == 2 and "--frames" in res.output and "[view]" in res.output


def test_lattice_interpolation_against_direct_evaluation():
    # The lambda/8 lattice against the exact field (Rayleigh integral plus images) summed
    # along the light at the pixels themselves: the projection within 0.2 % and its
    # derivative (against a central difference of the direct sums, step lambda/200) within
    # 1 % of their largest values (the interpolation bound, docs/references.md)
    import dataclasses

    from strobeplan.physics import lineofsight as los
    from strobeplan.preview import LATTICE_FRACTION, pixel_maps, project
    from strobeplan.viewgrid import view_grid

    rig = rig_from_dict(patched("levitator-40k", {}))
    plan = solve(rig)
    grid = dataclasses.replace(view_grid(rig, plan), nx=9, ny=120, pixel_m=0.4e-3, samples=33)
    speed = plan.air.speed_of_sound_m_s
    f = rig.wave.frequency
    lam = speed / f

    def pressure(pts):
        return pressure_at(rig, pts, f, speed=speed)[0]

    x, y = grid.offsets()
    u = los.lattice_nodes(x.min(), x.max(), lam / LATTICE_FRACTION)
    v = los.lattice_nodes(y.min(), y.max(), lam / LATTICE_FRACTION)
    s, w = los.trapezoid_weights(grid.samples, grid.depth_m)
    q_lat, _ = project(pressure, grid, u, v, s, w)
    q, dq = pixel_maps(q_lat, u, v, grid)
    pts = grid.points()[:, ::4]  # three columns

    def direct(shift):
        line = pts[..., None, :] + s[:, None] * grid.light_axis + shift * grid.v
        return pressure(line) @ w

    exact = direct(0.0)
    assert np.max(np.abs(q[:, ::4] - exact)) < 2e-3 * np.max(np.abs(exact))
    h = lam / 200
    d_exact = (direct(h) - direct(-h)) / (2 * h)
    assert np.max(np.abs(dq[:, ::4] - d_exact)) < 1e-2 * np.max(np.abs(d_exact))


def test_report_embeds_a_reduced_contact_sheet():
    import base64
    import io
    import re

    from PIL import Image

    from strobeplan.report.html import PREVIEW_PIXELS, report_html

    plan = solve(rig_from_dict(patched("opposed-pair-40k", {})))
    page = report_html(plan, plots=())
    m = re.search(r'id="preview-sheet"><img [^>]*src="data:image/png;base64,([^"]+)"', page)
    assert m, "the report has no embedded contact sheet"
    sheet = Image.open(io.BytesIO(base64.b64decode(m.group(1))))
    # 12 frames in rows of 6 tiles of at most PREVIEW_PIXELS px (plus 4 px gaps)
    assert sheet.width <= 6 * (PREVIEW_PIXELS + 4) + 4 and sheet.mode == "L"
    assert "12 frames over the sweep" in page
