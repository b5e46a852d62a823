"""Rig keys of the image chain: defaults derived from the layout, and one-line errors."""

from __future__ import annotations

import pytest

from strobeplan.errors import RigError
from strobeplan.rig import rig_from_dict
from tests.conftest import patched


@pytest.mark.parametrize("base, patch, path", [
    ("levitator-40k", {"optics.mirror_diameter": None}, "optics.mirror_diameter"),
    ("levitator-40k", {"optics.focal_length": None}, "optics.focal_length"),
    ("levitator-40k", {"optics.cutoff": "rod"}, "optics.cutoff_width"),
    ("levitator-40k", {"led.wavelength": None}, "led.wavelength"),
    ("levitator-40k", {"led.spectrum": "white"}, "led.spectrum"),
    ("levitator-40k", {"optics.passes": 2}, "optics.passes"),
    ("rangefinder-58k", {"optics.passes": 1}, "optics.passes"),
    ("levitator-40k", {"optics.source": None, "led.emitting_size": None}, "optics.source"),
    ("levitator-40k", {"optics.layout": None}, "optics.cutoff_distance"),
    ("levitator-40k", {"camera.lens": {"focal_length": "2 m", "f_number": 4}},
     "camera.lens.focal_length"),
    ("levitator-40k", {"led.relative_output": [{"current": "2 A", "ratio": 2},
                                               {"current": "1 A", "ratio": 1}]},
     "led.relative_output"),
    ("rangefinder-58k", {"optics.test_distance": "3 m"}, "optics.test_distance"),
    ("levitator-40k", {"optics.layout": "y-type"}, "optics.layout"),
])
def test_bad_image_keys_name_the_key(base, patch, path):
    with pytest.raises(RigError) as err:
        rig_from_dict(patched(base, patch))
    assert path in str(err.value)
    assert "\n" not in str(err.value)


def test_layout_fills_the_legacy_keys():
    # z-type: cutoff at f2 = 1.5 m; opening (1 - 0.7) x 1 mm; object pixel from the lens
    # (thin lens: 5.86 um x (1.5 - 0.05) / 0.05 = 169.94 um, Hecht eq. 5.24).
    rig = rig_from_dict(patched("levitator-40k", {}))
    assert rig.optics.cutoff_distance == pytest.approx(1.5)
    assert rig.optics.cutoff_opening == pytest.approx(0.3e-3)
    assert rig.camera.object_pixel == pytest.approx(5.86e-6 * 29.0)
    assert rig.optics.light_wavelength == pytest.approx(630e-9)  # from led.wavelength
    # double pass: passes default to 2, cutoff at R = 2 f
    rf = rig_from_dict(patched("rangefinder-58k", {"optics.passes": None,
                                                   "optics.cutoff_distance": None}))
    assert rf.optics.passes == 2 and rf.optics.cutoff_distance == pytest.approx(2.4)


def test_given_overrides_stay():
    rig = rig_from_dict(patched("levitator-40k", {"optics.cutoff_opening": "0.4 mm"}))
    assert rig.optics.cutoff_opening == pytest.approx(0.4e-3)


def test_cli_bad_key_exits_2_without_traceback(tmp_path):
    from tests.conftest import example, run_cli

    text = example("levitator-40k").read_text().replace('cutoff = "knife"', 'cutoff = "rod"')
    rig = tmp_path / "rod.toml"
    rig.write_text(text)
    res = run_cli("check", str(rig))
    assert res.exit_code == 2
    assert "optics.cutoff_width" in res.output and "Traceback" not in res.output
