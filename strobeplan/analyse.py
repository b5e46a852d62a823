"""`strobeplan analyse`: captured phase-stepped frames -> amplitude and phase maps, the
measured wave, and the calibration offset that makes the plan agree with the bench.

Flow: the frames (a folder, globs, files or multi-page TIFFs; 8 or 16 bit; grey, or colour
reduced to ITU-R BT.709 luma) are read one at a time and accumulated into the normal
equations of a per-pixel least-squares harmonic fit at the schedule's image phases
(:mod:`strobeplan.physics.demod`); no stack is held. The maps live on the plan's view grid
(:func:`strobeplan.viewgrid.view_grid`): frames of another size are taken as centred on the
grid's centre at the grid's object pixel (and the result says so).

Image model (the convention ``preview`` and ``analyse`` share): the knife edge lies across
the picture's up direction ``v`` and a ray deflected towards +v brightens its pixel, so a
pixel's contrast is (I - I0)/I0 = S eps_v with S the cutoff's sensitivity [1/rad] and
eps_v = passes * K / c^2 * integral of dp/dv along the light. The wave seen at phase phi
has the pressure Im[P(r) exp(i phi)], with P(view) real and positive when the plan is
right. A rod stop responds to eps^2 (its signal is the second harmonic).

What is measured (each with its uncertainty):

* the wave vector: from the robust mean of the local phase gradient over the pixels whose
  SNR passes a threshold (travelling waves), or from the node pattern (standing waves: the
  wavelength that best fits a wave plus its counter-wave);
* the speed of sound f * lambda against the plan's Cramer value, and the air temperature
  that Cramer's formula needs for it;
* the pressure phasor at the view from a two-wave fit of the contrast map around the view
  (:func:`strobeplan.physics.demod.pressure_phasor_from_gradient`): its phase against the
  planned one gives the calibration offset, its magnitude the pressure amplitude (the
  plane-wave chain eps = passes L K k p / c^2 inverted; Abel inversion with PyAbel for
  axisymmetric fields);
* aliasing: the cutoff's predicted harmonics against the frame count, and the spatial
  spectrum of the first-harmonic map at the wave vectors where an aliased harmonic lands.
"""

from __future__ import annotations

import cmath
import glob
import math
import os
import re
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from .errors import StrobeplanError
from .physics import acoustics, demod
from .physics.air import ZERO_CELSIUS
from .plan import PictureRule
from .safetext import clean
from .workload import require_frames

IMAGE_SUFFIXES = (".png", ".tif", ".tiff")
LUMA_BT709 = (0.2126, 0.7152, 0.0722)  # ITU-R BT.709 luma weights on R, G, B (as stored)
MIN_FRAMES = 4  # 3 fit the mean and the first harmonic; one more estimates the noise
SNR_MASK = 5.0  # pixels whose first harmonic has an amplitude SNR >= 5 (phase noise <= 11 deg)
CHUNK = 8  # frames per matrix product while accumulating
ALIAS_RATIO = 0.05  # a spectral peak at an alias wave vector over 5 % of the main peak
SCHEMA = "strobeplan-analyse/1"


class FrameError(StrobeplanError):
    """Unreadable, mismatched or too few frames, or phases that do not fit (exit 2)."""


# --- input -----------------------------------------------------------------------------------


def _natural_key(path: str):
    return [int(t) if t.isdigit() else t.lower() for t in re.split(r"(\d+)", str(path))]


def expand_inputs(inputs) -> list[Path]:
    """The image files named by folders, glob patterns and file names, in order.

    A folder gives its PNG and TIFF files in natural order (frame_2 before frame_10); a
    pattern (``*``, ``?``, ``[``) that names no existing file is expanded the same way.
    """
    out: list[Path] = []
    for item in inputs:
        text = str(item)
        p = Path(text)
        if p.is_dir():
            found = sorted((q for q in p.iterdir()
                            if q.suffix.lower() in IMAGE_SUFFIXES and q.is_file()),
                           key=lambda q: _natural_key(q.name))
            if not found:
                raise FrameError(f"{clean(text, 200)}: the folder holds no .png or .tif files")
            out += found
        elif p.exists():
            out.append(p)
        elif any(ch in text for ch in "*?["):
            found = sorted(glob.glob(text), key=_natural_key)
            found = [Path(f) for f in found if Path(f).is_file()]
            if not found:
                raise FrameError(f"{clean(text, 200)}: the pattern matches no file")
            out += found
        else:
            raise FrameError(f"{clean(text, 200)}: no such file or folder")
    return out


def _to_grey(arr: np.ndarray, where: str) -> tuple[np.ndarray, bool]:
    """A 2-D grey array (colour reduced to BT.709 luma) and whether it was colour."""
    if arr.ndim == 2:
        return arr, False
    if arr.ndim == 3 and arr.shape[-1] in (3, 4):
        rgb = arr[..., :3].astype(np.float64)
        return rgb @ np.asarray(LUMA_BT709), True
    if arr.ndim == 3 and arr.shape[0] in (3, 4):
        rgb = arr[:3].astype(np.float64)
        return np.tensordot(np.asarray(LUMA_BT709), rgb, axes=1), True
    raise FrameError(f"{clean(where, 200)}: {arr.ndim}-D image of shape {arr.shape}, expected "
                     "one grey or RGB picture per frame")


def _bits(arr: np.ndarray, where: str) -> int:
    if arr.dtype == np.uint8:
        return 8
    if arr.dtype == np.uint16:
        return 16
    raise FrameError(f"{clean(where, 200)}: {arr.dtype} pixels, expected 8- or 16-bit "
                     "unsigned integers")


def _read_image(path: Path) -> list[np.ndarray]:
    """The pictures in one file (every page of a multi-page TIFF)."""
    where = str(path)
    try:
        if path.suffix.lower() in (".tif", ".tiff"):
            import tifffile

            with tifffile.TiffFile(path) as tif:
                pages = [page.asarray() for page in tif.pages]
            out = []
            for a in pages:  # a page may hold a stack (ImageJ hyperstacks)
                if a.ndim == 3 and a.shape[-1] not in (3, 4) and a.shape[0] not in (3, 4):
                    out += list(a)
                else:
                    out.append(a)
            return out
        if path.suffix.lower() == ".png":
            import imageio.v3 as iio

            return [np.asarray(iio.imread(path))]
    except FrameError:
        raise
    except Exception as exc:  # noqa: BLE001 - any decoder failure is an unreadable file
        raise FrameError(f"{clean(where, 200)}: cannot be read as an image "
                         f"({clean(type(exc).__name__ + ': ' + str(exc), 120)})") from None
    raise FrameError(f"{clean(where, 200)}: expected a .png or .tif file")


def iter_frames(paths):
    """Yield (grey float64 frame, bit depth, colour?, where) one picture at a time."""
    for path in paths:
        for i, arr in enumerate(_read_image(Path(path))):
            where = f"{path}" if i == 0 else f"{path} (page {i + 1})"
            bits = _bits(arr, where)
            grey, colour = _to_grey(arr, where)
            yield np.asarray(grey, dtype=np.float64), bits, colour, where


def parse_phases(text: str) -> list[float]:
    """``--phases``: comma-separated angles, degrees unless a unit is given. [rad]"""
    from . import units

    out = []
    for part in str(text).split(","):
        s = part.strip()
        if not s:
            continue
        try:
            out.append(math.radians(float(s)))
            continue
        except ValueError:
            pass
        try:
            out.append(units.parse(s, "angle"))
        except units.UnitError as exc:
            raise FrameError(f"--phases {clean(s, 60)!r}: {exc}") from None
    if not out:
        raise FrameError("--phases: expected comma-separated angles, e.g. 0,90,180,270")
    return out


# --- accumulation ----------------------------------------------------------------------------


@dataclass
class Stack:
    """The demodulated stack: coefficients per pixel and what the frames were."""

    coefficients: np.ndarray  # (P, ny, nx): a0, a1, b1, (a2, b2)
    variance: np.ndarray      # (ny, nx) residual variance per frame [grey^2]
    gram: np.ndarray          # (P, P)
    orders: tuple             # fitted harmonic orders
    frames: int
    bits: int
    colour: bool
    clipped: np.ndarray       # (ny, nx) bool: a frame reached the top grey level
    sources: list = field(default_factory=list)
    levels: np.ndarray | None = None  # (N,) each frame's mean level, less the dark [grey]

    @property
    def shape(self):
        return self.coefficients.shape[1:]

    def harmonic(self, order: int) -> np.ndarray | None:
        if order not in self.orders:
            return None
        return demod.complex_harmonic(self.coefficients, self.orders.index(order) + 1)

    def harmonic_sigma(self, order: int) -> np.ndarray:
        return demod.coefficient_sigma(self.gram, np.sqrt(self.variance),
                                       self.orders.index(order) + 1)


def _load_single(path, name: str, shape=None) -> np.ndarray:
    frames = list(iter_frames(expand_inputs([path])))
    if len(frames) != 1:
        raise FrameError(f"{name} {clean(str(path), 200)}: expected one picture, found "
                         f"{len(frames)}")
    grey = frames[0][0]
    if shape is not None and grey.shape != shape:
        raise FrameError(f"{name} {clean(str(path), 200)}: {grey.shape[1]} x {grey.shape[0]} "
                         f"pixels, expected {shape[1]} x {shape[0]} like the frames")
    return grey


def demodulate(frames, phases, orders=(1, 2), dark=None, gains=None) -> Stack:
    """Accumulate the least-squares normal equations frame by frame and solve them.

    Parameters
    ----------
    frames : iterable
        Paths (or an iterable of 2-D arrays) in schedule order.
    phases : sequence of float
        The wave phase of each frame. [rad]
    orders : sequence of int
        Harmonics to fit (limited to what the frame count resolves).
    dark : ndarray, optional
        Dark frame subtracted from each frame. [grey]
    gains : sequence of float, optional
        Each frame (less the dark) is divided by its gain (frame-to-frame light changes,
        :func:`frame_gains`). [1]
    """
    phases = np.asarray(phases, dtype=float)
    n = len(phases)
    if n < MIN_FRAMES:
        raise FrameError(f"{n} frames: expected at least {MIN_FRAMES} (three fit the mean and "
                         "the first harmonic, one more estimates the noise)")
    orders = tuple(m for m in orders if m <= demod.max_resolved_order(n))
    basis = demod.harmonic_basis(phases, orders)
    p = basis.shape[1]
    if isinstance(frames, np.ndarray):
        source = ((np.asarray(f, dtype=np.float64), _bits(f, "frames"), False, f"frame {i}")
                  for i, f in enumerate(frames))
    else:
        items = list(frames)
        if items and isinstance(items[0], np.ndarray):
            source = ((np.asarray(f, dtype=np.float64), _bits(f, "frames"), False,
                       f"frame {i}") for i, f in enumerate(items))
        else:
            source = iter_frames(expand_inputs(items))
    first = None
    moments = sumsq = clipped = None
    bits0 = None
    colour_any = False
    buf = None
    rows = []
    count = 0
    where0 = ""
    sources = []
    levels: list[float] = []

    def flush():
        nonlocal moments, sumsq
        k = len(rows)
        if k == 0:
            return
        f = buf[:k]
        moments += basis[rows].T @ f
        sumsq += np.einsum("kn,kn->n", f, f)
        rows.clear()

    for grey, bits, colour, where in source:
        if count >= n:
            count += 1
            continue
        if first is None:
            shape = grey.shape
            where0, bits0 = where, bits
            if dark is not None and dark.shape != shape:
                raise FrameError(f"--dark: {dark.shape[1]} x {dark.shape[0]} pixels, expected "
                                 f"{shape[1]} x {shape[0]} like the frames")
            require_frames(n, grey.size)
            first = grey - dark if dark is not None else grey.copy()
            if gains is not None:
                first /= gains[0]
            npix = first.size
            moments = np.zeros((p, npix))
            sumsq = np.zeros(npix)
            clipped = np.zeros(shape, dtype=bool)
            buf = np.empty((CHUNK, npix))
        else:
            if grey.shape != first.shape:
                raise FrameError(f"{clean(where, 200)}: {grey.shape[1]} x {grey.shape[0]} "
                                 f"pixels, expected {first.shape[1]} x {first.shape[0]} like "
                                 f"the first frame ({clean(where0, 120)})")
            if bits != bits0:
                raise FrameError(f"{clean(where, 200)}: {bits}-bit, expected {bits0}-bit like "
                                 f"the first frame ({clean(where0, 120)})")
        clipped |= grey >= (2**bits - 1)
        colour_any |= colour
        row = buf[len(rows)].reshape(first.shape)
        if dark is not None:
            np.subtract(grey, dark, out=row)
        else:
            row[...] = grey
        levels.append(float(row.mean()))
        if gains is not None:
            row /= gains[count]
        row -= first  # first is dark-free (and gain-free)
        rows.append(count)
        sources.append(where)
        count += 1
        if len(rows) == CHUNK:
            flush()
    if first is None:
        raise FrameError("no frames given")
    if count != n:
        raise FrameError(f"{count} frames but {n} phases: give one phase per frame "
                         "(--phases, or the rig's [sweep] steps)")
    flush()
    gram = basis.T @ basis
    coef, var = demod.solve_normal_equations(gram, moments, sumsq, n)
    coef = coef.reshape((p,) + first.shape)
    coef[0] += first  # the fit ran on frames minus the first one
    return Stack(coefficients=coef, variance=var.reshape(first.shape), gram=gram,
                 orders=orders, frames=n, bits=bits0, colour=colour_any, clipped=clipped,
                 sources=sources, levels=np.asarray(levels))


LEVEL_NOISE_RATIO = 5.0  # frame levels scattering over 5 x what the pixels' noise explains
LEVEL_FLOOR = 1e-4  # ... and over 0.01 % of the mean level: the light changes frame to frame


def frame_gains(stack: Stack, phases) -> tuple[np.ndarray | None, float]:
    """Frame-to-frame light changes from the frames' mean levels: (the gains to divide the
    frames by, or None when the levels scatter no more than the noise explains; their rms
    relative to the mean [1]).

    The levels are fitted with the same harmonics as the pixels: the wave's own mean over
    the picture (and any change that follows the phase) stays; what is left over is a
    change of the whole frame's light (flash energy, camera gain), which otherwise
    inflates every pixel's residual and so its noise estimate.
    """
    levels = np.asarray(stack.levels, dtype=float)
    basis = demod.harmonic_basis(np.asarray(phases, dtype=float), stack.orders)
    coef, *_ = np.linalg.lstsq(basis, levels, rcond=None)
    resid = levels - basis @ coef
    mean = float(coef[0])
    if not mean > 0:
        return None, 0.0
    dof = max(1, levels.size - basis.shape[1])
    rms = math.sqrt(float(resid @ resid) / dof) / mean
    pixels = int(np.prod(stack.shape))
    expected = math.sqrt(float(np.median(stack.variance)) / max(pixels, 1)) / mean
    if rms <= max(LEVEL_NOISE_RATIO * expected, LEVEL_FLOOR):
        return None, rms
    return 1.0 + resid / mean, rms


# --- results ---------------------------------------------------------------------------------


@dataclass
class Analysis:
    """What ``analyse`` measured: the JSON summary and the maps."""

    summary: dict
    amplitude: np.ndarray            # |Z1| / I0: first-harmonic contrast (or the second's)
    phase_deg: np.ndarray            # arg Z [deg]
    snr: np.ndarray
    grid: object
    second_amplitude: np.ndarray | None = None
    second_phase_deg: np.ndarray | None = None
    pressure_abel: np.ndarray | None = None
    findings: list = field(default_factory=list)

    @property
    def calibration_offset_s(self):
        return (self.summary.get("calibration") or {}).get("offset_s")


ANALYSE_RULES = (
    PictureRule("analyse.clipped", "warning",
                "Pixels reach the top grey level in some frame (they are left out of the fit)",
                "less light or exposure, or a lower camera gain"),
    PictureRule("analyse.aliasing", "warning",
                "The frames are too few for the harmonics the cutoff produces: N phase steps "
                "resolve orders up to (N - 1) / 2 only, and higher ones alias onto the first",
                "take at least the recommended number of steps (image.min_phase_steps; "
                "`schedule` prints it)"),
    PictureRule("analyse.no_wave", "warning",
                "Too few pixels pass the signal-to-noise threshold: no wave is measured",
                "more light or a more sensitive cutoff, more frames, or averaging"),
    PictureRule("analyse.along_knife", "warning",
                "The wave travels along the knife edge (the picture's horizontal): the cutoff "
                "barely sees it, so its phase and pressure at the view are not measured",
                "turn the knife edge across the wave"),
    PictureRule("analyse.calibration", "note",
                "The wave at the view is more than 2 deg from the plan",
                "set strobe.calibration_offset to the measured value (`analyse --write-rig "
                "FILE` writes it)"),
    PictureRule("analyse.scale_unknown", "warning",
                "The frames' scale is unknown (no camera object pixel, no [view] size, no "
                "--pixel-size): the wavelength and speed of sound rest on a guess",
                "give --pixel-size, camera.object_pixel, or the [view] width the frames show"),
)
_RULES = {r.code: r for r in ANALYSE_RULES}


def _finding(code, message):
    """A finding of ``code`` (severity from ANALYSE_RULES) with this run's message."""
    return {"code": code, "severity": _RULES[code].severity, "message": message}


def _grid_for(rig, plan, shape, notes, findings, pixel_m=None):
    """The frames' pixel grid and where its scale came from: ``pixel_m`` (given), the
    plan's object pixel (camera and lens), the view's width over the frames' width, else a
    guess (a finding says so). [m]"""
    from .viewgrid import view_grid

    grid = view_grid(rig, plan)
    ny, nx = shape
    image = getattr(plan, "image", None)
    view = rig.view
    if pixel_m is not None:
        pixel, source = float(pixel_m), "given (--pixel-size)"
    elif image is not None and image.object_pixel_m:
        pixel, source = float(image.object_pixel_m), "the plan's object pixel (camera and lens)"
        cam = rig.camera
        if cam is not None and cam.binning > 1 and cam.width_px \
                and abs(nx - cam.width_px / cam.binning) <= 1:
            pixel *= cam.binning  # the frames are as wide as the binned sensor
            source += f" x camera.binning ({cam.binning}): the frames are binned"
    elif view is not None and (view.width is not None or view.height is not None):
        across = [(view.width, nx), (view.height, ny)]
        scales = [size / n for size, n in across if size is not None]
        pixel = scales[0]
        source = ("the view's width over the frames' width" if view.width is not None
                  else "the view's height over the frames' height")
        if len(scales) == 2 and abs(scales[1] / scales[0] - 1) > 0.02:
            notes.append(f"the view is {view.width * 1e3:.4g} x {view.height * 1e3:.4g} mm and "
                         f"the frames {nx} x {ny} pixels: the aspect ratios differ by "
                         f"{abs(scales[1] / scales[0] - 1):.0%}; the width sets the scale")
    else:
        pixel, source = grid.pixel_m, "a guess (the plan's default grid)"
        findings.append(_finding(
            "analyse.scale_unknown",
            f"the frames' scale is unknown: each pixel is taken as {pixel * 1e6:.4g} um, so "
            "the wavelength and speed of sound are only as good as that guess; give "
            "--pixel-size, camera.object_pixel, or the [view] width the frames show"))
    if (grid.ny, grid.nx) != (ny, nx) or pixel != grid.pixel_m:
        if (grid.ny, grid.nx) != (ny, nx):
            notes.append(f"the frames are {nx} x {ny} pixels and the plan's grid {grid.nx} x "
                         f"{grid.ny}: the frames are taken as centred on the grid's centre")
        grid = replace(grid, nx=nx, ny=ny, pixel_m=pixel)
    return grid, source


def _cutoff(rig, plan):
    """(kind, sensitivity per rad (knife) or per rad^2 (rod), how it was obtained)."""
    from .stages.image import cutoff_blur

    opt = rig.optics
    img = getattr(plan, "image", None)
    if opt is None:
        return "knife", None, None
    if img is not None:
        blur = cutoff_blur(rig)
        if img.cutoff == "rod":
            return "rod", demod.rod_curvature(img.source_image_m, opt.cutoff_width or 0.0,
                                              blur, img.cutoff_distance_m,
                                              img.background_transmission), "geometry"
        return "knife", demod.knife_slope(img.source_image_m, opt.cut_fraction, blur,
                                          img.cutoff_distance_m,
                                          img.background_transmission), "geometry"
    if opt.cutoff_distance and opt.cutoff_opening and opt.cutoff == "knife":
        return "knife", opt.cutoff_distance / opt.cutoff_opening, "geometry (f2 / a)"
    return opt.cutoff, None, None


def _spectrum_peak(z, mask):
    """Main spatial-frequency peak of a complex map: (f_row, f_col) [cycles/pixel], the
    peak's magnitude, the magnitude at the mirrored frequency, and the spectrum.

    Pictures holding fewer than three cycles of the wave put its peak among the lowest
    bins; there the peak is located again on a windowed, zero-padded spectrum of a copy
    reduced to at most 64 pixels a side (the wave spans over a third of the picture, so
    the reduction cannot alias it)."""
    # less the masked mean: a uniform phasor would leak from zero frequency through the
    # mask's own pattern
    zz = np.where(mask, z - (np.mean(z[mask]) if mask.any() else 0.0), 0.0)
    spec = np.abs(np.fft.fft2(zz))
    ny, nx = spec.shape
    fr = np.fft.fftfreq(ny)
    fc = np.fft.fftfreq(nx)
    work = spec.copy()
    work[0, 0] = 0.0  # a uniform first harmonic is no wave
    i, j = np.unravel_index(np.argmax(work), work.shape)

    def refine(line, k):
        a, b, c = line[(k - 1) % line.size], line[k], line[(k + 1) % line.size]
        den = a - 2 * b + c
        return 0.5 * (a - c) / den if den < 0 else 0.0

    if abs(fr[i]) * ny < 3 and abs(fc[j]) * nx < 3:
        d = max(1, int(math.ceil(max(ny, nx) / 64)))
        small = zz[::d, ::d]
        sy, sx = small.shape
        win = np.outer(np.hanning(sy + 2)[1:-1], np.hanning(sx + 2)[1:-1])
        py, px = 8 * sy, 8 * sx
        fine = np.abs(np.fft.fft2(small * win, s=(py, px)))
        frp, fcp = np.fft.fftfreq(py), np.fft.fftfreq(px)
        # leave out the window's own low-pass lobe around zero (a quarter cycle across)
        lobe = (np.abs(frp)[:, None] * sy < 0.25) & (np.abs(fcp)[None, :] * sx < 0.25)
        fine[lobe] = 0.0
        a_, b_ = np.unravel_index(np.argmax(fine), fine.shape)
        f_row = (frp[a_] + refine(fine[:, b_], a_) / py) / d
        f_col = (fcp[b_] + refine(fine[a_, :], b_) / px) / d
        i, j = int(round(f_row * ny)) % ny, int(round(f_col * nx)) % nx
    else:
        f_row = fr[i] + refine(spec[:, j], i) / ny
        f_col = fc[j] + refine(spec[i, :], j) / nx
    mirror = spec[(-i) % ny, (-j) % nx]
    return f_row, f_col, float(spec[i, j]), float(mirror), spec


def _alias_check(spec, f_row, f_col, phases, orders, main, noise_floor):
    """Harmonics whose alias lands on the first-harmonic map with a visible peak."""
    ny, nx = spec.shape
    hits = []
    for m in range(2, 8):
        lam = demod.leakage(phases, orders, m)[0]  # into the fundamental
        for sign, weight in ((1, abs(lam[0])), (-1, abs(lam[1]))):
            if weight < 0.1:
                continue
            i = int(round(sign * m * f_row * ny)) % ny
            j = int(round(sign * m * f_col * nx)) % nx
            patch = spec[np.ix_([(i - 1) % ny, i, (i + 1) % ny], [(j - 1) % nx, j, (j + 1) % nx])]
            level = float(patch.max())
            if level >= ALIAS_RATIO * main and level >= 5.0 * noise_floor:
                hits.append((m, level / main))
    return hits


FIT_PIXELS = 20000  # pixels the wave-vector fit uses (every n-th of the mask): its
# wavelength's sigma is a few 1e-5 on the bench's 1024 x 1024 stack; more only costs time


def _fit_sample(z, mask, grid, limit=60000):
    """Every n-th masked pixel (at most ``limit``): (rows, cols, x, y, values, n)."""
    ys, xs = np.nonzero(mask)
    stride = max(1, ys.size // limit)
    ys, xs = ys[::stride], xs[::stride]
    x = (xs - (grid.nx - 1) / 2.0) * grid.pixel_m
    y = ((grid.ny - 1) / 2.0 - ys) * grid.pixel_m
    return ys, xs, x, y, z[ys, xs], stride


def _wave_vector(z, mask, grid):
    """Measured in-plane wave vector (k_u, k_v) [rad/m], its magnitude's sigma, the kind
    ('travelling' or 'standing'), how it was measured, and the spectrum data.

    The wave vector is refined in both components by the least-squares fit of a wave, its
    counter-wave and a uniform phasor (what frame-to-frame light changes leave on the map)
    over the masked pixels; a standing wave keeps that fit, a travelling one is measured
    from the phase gradient of the map less the uniform phasor (which follows a curved
    wavefront)."""
    pix = grid.pixel_m
    f_row, f_col, main, mirror, spec = _spectrum_peak(z, mask)
    standing = mirror >= 0.3 * main
    # a wave exp(-i k.r) has its peak at -k: columns along +u, rows along -v
    k_u0 = -2 * math.pi * f_col / pix
    k_v0 = 2 * math.pi * f_row / pix
    k0 = math.hypot(k_u0, k_v0)
    info = {"f_row": f_row, "f_col": f_col, "main": main, "spec": spec}
    ys, xs, x, y, zz, stride = _fit_sample(z, mask, grid, limit=FIT_PIXELS)
    if ys.size < 10 or not k0 > 0:
        return None
    n_fit = max(1, zz.size - 6)

    def rss_vec(kvec):
        # within a factor 2 of the spectrum's estimate: towards zero the waves and the
        # uniform phasor become one and the same
        if not 0.5 * k0 < math.hypot(kvec[0], kvec[1]) < 2.0 * k0:
            return math.inf
        rms = demod.two_wave_fit(zz, x, y, kvec[0], kvec[1], constant=True)[3]
        return rms**2 * n_fit

    # the spectrum's peak is only a start: a picture of few cycles locates it to a few per
    # cent; the fit refines both components
    from scipy.optimize import minimize

    step = 0.03 * k0
    best = minimize(rss_vec, np.array([k_u0, k_v0]), method="Nelder-Mead",
                    options={"xatol": 1e-5 * k0, "fatol": 0.0, "maxiter": 400,
                             "initial_simplex": [[k_u0, k_v0], [k_u0 + step, k_v0],
                                                 [k_u0, k_v0 + step]]})
    k_fit = float(np.hypot(*best.x))
    direction = np.asarray(best.x, dtype=float) / k_fit
    alpha, beta, _, _, gamma = demod.two_wave_fit(zz, x, y, best.x[0], best.x[1],
                                                  constant=True)
    info["uniform"] = gamma
    if not standing:
        lam_px = 2 * math.pi / max(k_fit * pix, 1e-12)
        step = max(1, int(round(lam_px / 8)))
        g_col, g_row = demod.phase_gradient(z - gamma, step)
        both = mask[:-step, :-step] & mask[:-step, step:] & mask[step:, :-step]
        if both.sum() < 10:
            return None
        # tiles of the gradient field: the mean vector of a tile has little noise, so its
        # length is not biased upwards by the noise (as a per-pixel |gradient| would be),
        # and tiles follow a curved wavefront
        tile = max(4, int(round(lam_px / 4)))
        rows, cols = both.shape
        tr, tc = rows // tile, cols // tile
        if tr * tc < 4:
            tile, tr, tc = 1, rows, cols

        def tiles(a):
            a = a[:tr * tile, :tc * tile].reshape(tr, tile, tc, tile)
            return a.sum(axis=(1, 3))

        w = both.astype(float)
        cnt = tiles(w)
        ok = cnt >= 0.5 * tile * tile
        mc = tiles(np.where(both, g_col, 0.0))[ok] / cnt[ok]
        mr = tiles(np.where(both, g_row, 0.0))[ok] / cnt[ok]
        if mc.size < 3:
            return None
        mag, sd, n_tiles = demod.robust_mean(np.hypot(mc, mr))
        dc, _, _ = demod.robust_mean(mc)
        dr, _, _ = demod.robust_mean(mr)
        scale = mag / max(math.hypot(dc, dr), 1e-300)
        k_u, k_v = -dc * scale / pix, dr * scale / pix  # direction from the mean vector
        sigma = sd / math.sqrt(max(n_tiles, 1)) / pix
        return k_u, k_v, sigma, "travelling", "phase gradient", info

    # standing: the node pattern's wave number, its sigma from the fit's curvature
    def rss(k):
        return rss_vec(k * direction)

    ks2 = k_fit * np.linspace(0.995, 1.005, 21)
    r2 = np.array([rss(k) for k in ks2])
    c2, c1, c0 = np.polyfit(ks2 - ks2[10], r2, 2)
    k_best = ks2[10] - c1 / (2 * c2) if c2 > 0 and abs(c1 / (2 * c2)) < 0.005 * k_fit \
        else k_fit
    var = r2.min() / n_fit
    sigma = math.sqrt(2 * var / (2 * c2)) if c2 > 0 else math.nan
    sigma *= math.sqrt(stride)  # every stride-th pixel was used
    ku, kv = k_best * direction
    if kv < 0 or (abs(kv) < 1e-12 and ku < 0):  # a standing wave's axis: point it up
        ku, kv = -ku, -kv
    return float(ku), float(kv), float(sigma), "standing", "node pattern", info


MODEL_PIXELS = 1024  # the field model's picture: at most this many pixels a side (finer
# than the frames only costs the interpolation; the same pixels must be kept as in the frames:
# on the opposed pair a 192-pixel model left -1.1 %, the full grid -0.1 %)
MODEL_ROUNDS = 4  # pictures drawn again at the corrected speed
PLANE_CHI2 = 2.0  # the plane two-wave model explains the map when its residual is within
# twice the demodulation's noise (reduced chi-square); otherwise the pattern is curved


def _image_wavelength(rig, plan, grid, z, zs, good, k_u, k_v, kind, notes):
    """How the picture's wavelength relates to the air's: a plane pattern shows it as it
    is; a curved one (a spreading beam seen through its depth, crossing waves) shows the
    node or phase spacing of the line-of-sight integral, which the field model predicts.

    The map's residual against plane waves at the measured wave vector (reduced chi-square
    against the demodulation's own noise) says whether it is curved. A curved map of a rig
    with a field model is compared with the model's picture at the planned speed (drawn by
    the preview's engine on the frames' grid, at most MODEL_PIXELS a side): when that picture
    explains more of the map than the best pair of plane waves, it is measured the same way
    on the same pixels and the wavelength is scaled by planned / model-measured.

    Returns (summary dict or None without a measurable fit, the model's first-harmonic
    phasor map on the frames' grid or None): the map is the deflection E exp(-i theta)
    with theta the pressure's phase at the view (preview's frame convention), so the
    frames' contrast is S E exp(-i theta) exp(i delta) for a wave delta late.
    """
    if int(good.sum()) < 50:
        return None, None
    ys, xs, x, y, zz, _ = _fit_sample(z, good, grid)
    *_, rms = demod.two_wave_fit(zz, x, y, k_u, k_v)
    noise2 = 2.0 * float(np.mean(zs[ys, xs] ** 2))
    chi2 = rms**2 / noise2 if noise2 > 0 else math.inf
    power = float(np.sum(np.abs(zz) ** 2))
    plane_share = max(0.0, 1.0 - rms**2 * max(zz.size - 2, 1) / power) if power > 0 else 0.0
    out = {"plane_reduced_chi2": chi2, "plane_explains": plane_share, "factor": 1.0,
           "applied": False, "model": "plane waves (the picture's spacing is the air's)"}
    if chi2 <= PLANE_CHI2 or rig.emitter is None:
        if chi2 > PLANE_CHI2:
            out["model"] = ("plane waves, although the map departs from them (no field model "
                            "to compare with): the wavelength is a mean over the picture")
        return out, None
    from .preview import PreviewError, reduced_grid, render_preview
    from .workload import WorkloadError

    coarse = reduced_grid(grid, MODEL_PIXELS)
    freq = float(rig.wave.frequency)

    def picture(speed):
        pv = render_preview(rig, plan, frames=1, noise=False, grid=coarse, speed=speed)
        theta = math.radians(pv.summary["pressure_phase_at_view_deg"])
        return pv.deflection * cmath.exp(-1j * theta)

    try:
        model = picture(None)
    except (PreviewError, WorkloadError):
        return out, None
    f = max(1, int(round(coarse.pixel_m / grid.pixel_m)))
    r0 = max(0, (grid.ny - coarse.ny * f) // 2)
    c0 = max(0, (grid.nx - coarse.nx * f) // 2)
    # the share of the map the model's picture explains (one complex factor), against the
    # share the best pair of plane waves explains: the model is used only when it does better
    # (frames of another field than the rig's, e.g. plane waves, keep the plain measurement)
    m = model[np.clip((ys - r0) // f, 0, coarse.ny - 1), np.clip((xs - c0) // f, 0, coarse.nx - 1)]
    cross = complex(np.sum(np.conj(m) * zz))
    norm = float(np.sum(np.abs(m) ** 2))
    model_share = abs(cross) ** 2 / (norm * power) if norm > 0 and power > 0 else 0.0
    out["model_explains"] = model_share
    if model_share <= plane_share:
        out["model"] = ("plane waves: the rig's field model explains less of the map "
                        f"({model_share:.0%}) than a pair of plane waves ({plane_share:.0%}), "
                        "so the frames are measured as they are")
        return out, None
    block = good[r0:r0 + coarse.ny * f, c0:c0 + coarse.nx * f]
    if block.shape != (coarse.ny * f, coarse.nx * f):
        return out, None
    keep = block.reshape(coarse.ny, f, coarse.nx, f).mean(axis=(1, 3)) >= 0.5
    if keep.sum() < 50:
        keep = np.ones(model.shape, dtype=bool)

    def measured(picture_map):
        wave = _wave_vector(picture_map, keep, coarse)
        return None if wave is None else 2 * math.pi / math.hypot(wave[0], wave[1])

    lam_image = 2 * math.pi / math.hypot(k_u, k_v)
    speed = float(plan.air.speed_of_sound_m_s)
    lam_model = measured(model)
    if lam_model is None:
        return out, None
    # the picture's geometry changes with the wavelength: the speed is the one whose picture
    # measures what the frames measure (secant steps from the plan's speed and the first
    # correction, until within 0.05 %; at most MODEL_ROUNDS more pictures)
    prev = None
    for _ in range(MODEL_ROUNDS):
        if prev is None:
            new_speed = lam_image * speed / lam_model
        else:
            slope = (lam_model - prev[1]) / (speed - prev[0])
            new_speed = speed + (lam_image - lam_model) / slope if slope > 0 else \
                lam_image * speed / lam_model
        if abs(new_speed / speed - 1) <= 5e-4:
            break
        try:
            again = measured(picture(new_speed))
        except (PreviewError, WorkloadError):
            break
        if again is None:
            break
        prev = (speed, lam_model)
        speed, lam_model = new_speed, again
    lam_true = speed / freq
    out.update({"factor": lam_true / lam_model, "applied": True,
                "model_image_wavelength_m": lam_model, "model_speed_m_s": speed,
                "model": "the field model's line-of-sight picture (preview's engine), "
                         "measured like the frames: the frames' wavelength is scaled by the "
                         "model's wavelength over its picture's"})
    notes.append(f"the map departs from plane waves (reduced chi-square {chi2:.3g}) and the "
                 f"rig's field model explains {model_share:.0%} of it (plane waves "
                 f"{plane_share:.0%}): its picture of a {lam_true * 1e3:.4g} mm wave measures "
                 f"{lam_model * 1e3:.4g} mm, so the frames' wavelength is scaled by "
                 f"{lam_true / lam_model:.4f}")
    return out, (model if f == 1 else None)


def analyse_frames(rig, frames_or_paths, phases_deg=None, *, plan=None, dark=None, flat=None,
                   snr_threshold=SNR_MASK, lens=None, pixel_m=None) -> Analysis:
    """Demodulate a phase-stepped stack and measure the wave against the plan.

    Parameters
    ----------
    rig : strobeplan.rig.Rig
        The rig the frames were taken with.
    frames_or_paths : sequence
        Paths (files, folders, globs, multi-page TIFFs) or 2-D uint8/uint16 arrays, or a
        (N, ny, nx) array, in schedule order.
    phases_deg : sequence of float, optional
        The wave phase at the view of each frame [deg]; default the schedule's image
        phases (a rig without [sweep] gets a full-cycle sweep of as many steps as frames).
    plan : Plan, optional
        The solved plan (solved here when not given).
    dark, flat : path or ndarray, optional
        Dark frame (subtracted) and flat (no-sound) frame (the contrast's background).
    snr_threshold : float
        Pixels used for the wave vector: first-harmonic amplitude SNR at least this.
    lens : (path or ndarray, focal_length_m), optional
        Schardin calibration: a frame of a lens of known focal length in the test region;
        its contrast slope replaces the geometry's sensitivity.
    pixel_m : float, optional
        The frames' pixel in the object plane [m]; default the plan's object pixel (camera
        and lens), else the [view] width over the frames' width.
    """
    from .solve import build_schedule, solve

    if pixel_m is not None and not (math.isfinite(pixel_m) and pixel_m > 0):
        raise FrameError(f"--pixel-size: {pixel_m!r} m, expected a positive length")
    if plan is None:
        plan = solve(rig)
    notes: list[str] = []
    findings: list[dict] = []
    if isinstance(frames_or_paths, (str, os.PathLike)):
        frames_or_paths = [frames_or_paths]
    # how many frames: needed before reading when the phases come from the schedule
    if isinstance(frames_or_paths, np.ndarray) and frames_or_paths.ndim == 3:
        items = frames_or_paths
        count = items.shape[0]
    else:
        items = list(frames_or_paths)
        if items and not isinstance(items[0], np.ndarray):
            items = expand_inputs(items)
            count = _count_pictures(items)
        else:
            count = len(items)
    _require_workload(count, items)
    sidecar = None if phases_deg is not None else _sidecar_phases(items, count)
    if sidecar is not None:
        phases_deg, phases_from = sidecar
        phases = np.radians(np.asarray(phases_deg, dtype=float))
    elif phases_deg is not None:
        phases = np.radians(np.asarray(phases_deg, dtype=float))
        if phases.size != count:
            raise FrameError(f"--phases: {phases.size} values for {count} frames")
        phases_from = "given"
    else:
        if rig.sweep is None:
            sched = build_schedule(plan, steps=count)
            notes.append(f"the rig has no [sweep]: the frames are taken as a full-cycle sweep "
                         f"of {count} steps from strobe.phase")
        else:
            sched = build_schedule(plan)
        if len(sched.rows) != count:
            raise FrameError(f"{count} frames but the rig's schedule has {len(sched.rows)} "
                             "rows: give --phases, or set [sweep] steps to the frame count")
        phases = np.radians([r.achieved_phase_deg for r in sched.rows])
        phases_from = f"schedule ({sched.mode})"
    kind, sens, sens_how = _cutoff(rig, plan)
    rod = kind == "rod"
    orders = (1, 2)
    if rod and count < 5:
        raise FrameError(f"{count} frames: a rod stop's signal is the second harmonic, which "
                         "needs at least 5 frames")
    dark_arr = _as_picture(dark, "--dark")
    stack = demodulate(items, phases, orders, dark=dark_arr)
    gains, level_rms = frame_gains(stack, phases)
    if gains is not None:
        stack = demodulate(items, phases, orders, dark=dark_arr, gains=gains)
        notes.append(f"the frames' light changes from frame to frame by {level_rms:.2%} rms "
                     "beyond what the wave and the noise explain (flash energy, camera "
                     "gain): each frame is divided by its level before the fit")
    shape = stack.shape
    if dark_arr is not None and dark_arr.shape != shape:
        raise FrameError("--dark: size differs from the frames")
    flat_arr = _as_picture(flat, "--flat", shape)
    background = stack.coefficients[0]
    if flat_arr is not None:
        background = flat_arr - (dark_arr if dark_arr is not None else 0.0)
    grid, scale_from = _grid_for(rig, plan, shape, notes, findings, pixel_m)
    signal_order = 2 if rod else 1
    if signal_order not in stack.orders:
        raise FrameError(f"{count} frames resolve harmonics up to "
                         f"{demod.max_resolved_order(count)} only")
    z = stack.harmonic(signal_order)
    zs = stack.harmonic_sigma(signal_order)
    with np.errstate(divide="ignore", invalid="ignore"):
        snr = np.abs(z) / zs
        contrast = np.where(background > 0, z / background, np.nan)
    usable = ~stack.clipped & (background > 0) & np.isfinite(contrast)
    good = (snr >= snr_threshold) & usable
    clipped_frac = float(stack.clipped.mean())
    if clipped_frac > 1e-3:
        findings.append(_finding("analyse.clipped",
                                 f"{clipped_frac:.1%} of the pixels reach the top grey level in "
                                 "some frame: they are left out (less light or exposure)"))

    # --- aliasing: the cutoff's predicted harmonics, then the map's spatial spectrum -------
    n = stack.frames
    img = getattr(plan, "image", None)
    need = getattr(img, "min_phase_steps", None) if img is not None else None
    alias = {"frames": n, "resolved_order": demod.max_resolved_order(n),
             "min_steps_for_cutoff": None if need is None else int(need),
             "aliased_orders": []}
    if need is not None and n < need:
        findings.append(_finding("analyse.aliasing",
                                 f"{n} frames resolve harmonics up to "
                                 f"{demod.max_resolved_order(n)}; the plan's cutoff response "
                                 f"carries harmonics up to order {img.harmonic_order} and needs "
                                 f"{need} frames or more"))

    wave = None
    if good.sum() >= 50:
        wave = _wave_vector(contrast, good, grid)
    if wave is not None:
        # a uniform phasor (frame-to-frame light changes) adds to the wave on one side of
        # each node and cancels it on the other, so the SNR mask it leaves repeats once a
        # wavelength and can mislead the spectrum: with a noticeable one, the mask is made
        # again from the map without it and the wave measured again
        uniform = complex(wave[5].get("uniform", 0.0))
        level = float(np.median(np.abs(contrast[good])))
        if abs(uniform) > 0.05 * level:
            with np.errstate(divide="ignore", invalid="ignore"):
                snr = np.abs(z - uniform * background) / zs
            again = (snr >= snr_threshold) & usable
            if again.sum() >= 50:
                second = _wave_vector(contrast, again, grid)
                if second is not None:
                    wave, good = second, again
    summary_wave = None
    view_block = None
    calib = None
    pressure = None
    deflection = None
    if wave is None:
        findings.append(_finding("analyse.no_wave",
                                 f"fewer than 50 pixels have a signal-to-noise ratio of "
                                 f"{snr_threshold:g} or more: no wave measured"))
    else:
        k_u, k_v, k_sigma, wave_kind, method, info = wave
        spec = info["spec"]
        floor = float(np.median(spec))
        hits = _alias_check(spec, info["f_row"], info["f_col"], phases, stack.orders,
                            info["main"], floor)
        if hits:
            alias["aliased_orders"] = [m for m, _ in hits]
            desc = ", ".join(f"order {m} at {r:.0%} of the wave's peak" for m, r in hits)
            findings.append(_finding("analyse.aliasing",
                                     f"{n} frames: harmonics alias onto the first harmonic's map "
                                     f"({desc}); take at least "
                                     f"{demod.min_steps(max(m for m, _ in hits))} frames"))
        if rod:  # the second harmonic shows the wave at twice its spatial frequency
            k_u, k_v, k_sigma = k_u / 2, k_v / 2, k_sigma / 2
        k = math.hypot(k_u, k_v)
        # the uniform phasor the fit found (frame-to-frame light changes) leaves the map
        uniform = complex(info.get("uniform", 0.0))
        contrast = contrast - uniform
        with np.errstate(divide="ignore", invalid="ignore"):
            contrast_sigma = np.where(background > 0, zs / background, np.nan)
        image, model_map = (None, None) if rod else _image_wavelength(
            rig, plan, grid, contrast, contrast_sigma, good, k_u, k_v, wave_kind, notes)
        factor = image["factor"] if image is not None and image["applied"] else 1.0
        lam = 2 * math.pi / k * factor
        lam_sigma = lam * k_sigma / k
        f = plan.timing.drive_frequency_hz
        speed = f * lam
        speed_sigma = f * lam_sigma
        a = rig.air
        temp = demod.temperature_for_speed(speed, a.relative_humidity, a.pressure, a.co2)
        slope = demod.speed_slope(temp, a.relative_humidity, a.pressure, a.co2)
        direction = (k_u * grid.u + k_v * grid.v) / k
        planned_speed = float(plan.air.speed_of_sound_m_s)
        summary_wave = {
            "kind": wave_kind, "method": method,
            "wavelength_m": lam, "wavelength_uncertainty_m": lam_sigma,
            "planned_wavelength_m": planned_speed / f,
            "direction": [float(x) for x in direction],
            "direction_uncertainty_deg": math.degrees(k_sigma / k),
            "frequency_hz": f,
            "speed_of_sound_m_s": speed, "speed_of_sound_uncertainty_m_s": speed_sigma,
            "planned_speed_of_sound_m_s": planned_speed,
            "speed_difference_m_s": speed - planned_speed,
            "air_temperature_c": temp - ZERO_CELSIUS,
            "air_temperature_uncertainty_k": speed_sigma / slope if slope else None,
            "planned_air_temperature_c": a.temperature - ZERO_CELSIUS,
            "pixels_used": int(good.sum()),
            "image_wavelength_m": 2 * math.pi / k,
            "uniform_contrast": [uniform.real, uniform.imag],
            "wavelength_model": image,
        }
        view_block, calib, pressure, deflection = _at_view(
            rig, plan, grid, contrast, good, k_u, k_v, wave_kind, sens, sens_how, rod, phases,
            notes, findings, lens, speed, stack, background, model_map)
    abel_map = None
    if pressure is not None and not rod and sens:
        abel = _abel(rig, plan, grid, contrast, good, summary_wave, sens, notes)
        if abel is not None:
            pressure.update(abel[0])
            abel_map = abel[1]
    noise = float(np.sqrt(np.nanmedian(stack.variance)))
    summary = {
        "schema": SCHEMA,
        "rig": rig.name,
        "frames": {"count": n, "width_px": shape[1], "height_px": shape[0],
                   "bit_depth": stack.bits,
                   "colour": ("colour frames reduced to ITU-R BT.709 luma "
                              "(0.2126 R + 0.7152 G + 0.0722 B, on the stored values)"
                              if stack.colour else "grey"),
                   "dark": dark is not None, "flat": flat is not None,
                   "phases_from": phases_from,
                   "level_changes_rms": level_rms,
                   "levels_normalised": gains is not None,
                   "phases_deg": [float(x) for x in np.degrees(phases)]},
        "grid": {"pixel_m": grid.pixel_m, "pixel_from": scale_from, "width_px": grid.nx,
                 "height_px": grid.ny,
                 "centre_m": [float(x) for x in grid.centre],
                 "u": [float(x) for x in grid.u], "v": [float(x) for x in grid.v]},
        "demodulation": {"orders": list(stack.orders), "signal_order": signal_order,
                         "noise_grey": noise, "snr_threshold": snr_threshold,
                         "pixels_above_threshold": float(good.mean()),
                         "median_phase_noise_deg": _median_phase_noise(snr, good)},
        "aliasing": alias,
        "wave": summary_wave,
        "view": view_block,
        "calibration": calib,
        "deflection": deflection,
        "pressure": pressure,
        "findings": findings,
        "notes": notes,
    }
    amp = np.abs(contrast)
    second = stack.harmonic(2) if not rod else None
    return Analysis(summary=summary, amplitude=amp.astype(np.float32),
                    phase_deg=np.degrees(np.angle(z)).astype(np.float32),
                    snr=snr.astype(np.float32), grid=grid,
                    second_amplitude=None if second is None else
                    (np.abs(second) / np.where(background > 0, background, np.nan)
                     ).astype(np.float32),
                    second_phase_deg=None if second is None else
                    np.degrees(np.angle(second)).astype(np.float32),
                    pressure_abel=abel_map, findings=findings)


SIDECAR = "preview.json"  # written beside frame_000.tif... by `strobeplan preview`


def _sidecar_phases(items, count):
    """Phases from a preview.json (key ``phases_deg``) beside the first frame, when it holds
    one per frame: (phases [deg], where) or None."""
    import json

    if isinstance(items, np.ndarray) or not items or isinstance(items[0], np.ndarray):
        return None
    side = Path(items[0]).parent / SIDECAR
    try:
        data = json.loads(side.read_text(encoding="utf-8"))
        phases = [float(x) for x in data["phases_deg"]]
    except (OSError, ValueError, KeyError, TypeError):
        return None
    if len(phases) != count or not all(math.isfinite(x) for x in phases):
        return None
    return phases, f"{side.name} beside the frames"


def _median_phase_noise(snr, good):
    if not good.any():
        return None
    return float(np.degrees(1.0 / np.median(snr[good])))


def _count_pictures(paths) -> int:
    """Pictures in the files (pages of multi-page TIFFs counted without decoding)."""
    total = 0
    for p in paths:
        if Path(p).suffix.lower() in (".tif", ".tiff"):
            try:
                import tifffile

                with tifffile.TiffFile(p) as tif:
                    pages = len(tif.pages)
                    if pages == 1:
                        shape = tif.pages[0].shape
                        if len(shape) == 3 and shape[-1] not in (3, 4) and \
                                shape[0] not in (3, 4):
                            pages = shape[0]
                total += pages
            except Exception as exc:  # noqa: BLE001 - unreadable file
                raise FrameError(f"{clean(str(p), 200)}: cannot be read as an image "
                                 f"({clean(type(exc).__name__ + ': ' + str(exc), 120)})"
                                 ) from None
        else:
            total += 1
    return total


def _require_workload(count, items):
    if isinstance(items, np.ndarray):
        require_frames(count, int(np.prod(items.shape[1:])))
    elif items and isinstance(items[0], np.ndarray):
        require_frames(count, int(items[0].size))
    # files: checked once the first frame is decoded (demodulate)


def _as_picture(value, name, shape=None):
    if value is None:
        return None
    if isinstance(value, np.ndarray):
        arr, _ = _to_grey(value, name)
        arr = np.asarray(arr, dtype=np.float64)
        if shape is not None and arr.shape != shape:
            raise FrameError(f"{name}: {arr.shape[1]} x {arr.shape[0]} pixels, expected "
                             f"{shape[1]} x {shape[0]} like the frames")
        return arr
    return _load_single(value, name, shape)


def _window(grid, row, col, radius_px, mask):
    ny, nx = mask.shape
    r0, r1 = max(0, int(row - radius_px)), min(ny, int(row + radius_px) + 1)
    c0, c1 = max(0, int(col - radius_px)), min(nx, int(col + radius_px) + 1)
    if r0 >= r1 or c0 >= c1:
        return None
    rr, cc = np.mgrid[r0:r1, c0:c1]
    inside = (rr - row) ** 2 + (cc - col) ** 2 <= radius_px**2
    sel = inside & mask[r0:r1, c0:c1]
    return rr[sel], cc[sel]


RADIUS_WAVELENGTHS = 0.3  # the two-wave fit's window around the view, in wavelengths (a wider
# window lets the wavefront's curvature and the amplitude's fall bias the phase: on the
# preview of the bundled levitator -7 deg at 1 wavelength, -1.6 deg at 0.3)


def _at_view(rig, plan, grid, contrast, good, k_u, k_v, kind, sens, sens_how, rod, phases,
             notes, findings, lens, speed, stack, background, model_map=None):
    """Phase and pressure at the view: a two-wave fit of the contrast map around it, or,
    when the map is curved and the field model drew it (``model_map``), the model's picture
    fitted to the frames there (one complex factor: its phase is the wave's lag)."""
    from .stages.field import view_point
    from .stages.optics import gladstone_dale

    view = view_point(rig) if rig.emitter is not None or rig.view is not None else grid.centre
    row, col = grid.pixel_of(view)
    ny, nx = good.shape
    inside = 0 <= row <= ny - 1 and 0 <= col <= nx - 1
    if not inside:
        notes.append(f"the view point maps to pixel ({row:.1f}, {col:.1f}), outside the "
                     "frames: its phase is extrapolated from the nearest wave")
    k = math.hypot(k_u, k_v)
    lam_px = 2 * math.pi / k / grid.pixel_m
    radius = max(RADIUS_WAVELENGTHS * lam_px, 12.0)
    rc = (min(max(row, 0), ny - 1), min(max(col, 0), nx - 1))
    sel = _window(grid, rc[0], rc[1], radius, good)
    if sel is None or sel[0].size < 12:
        sel = np.nonzero(good)
    rr, cc = sel
    x = (cc - col) * grid.pixel_m
    y = (row - rr) * grid.pixel_m
    zz = contrast[rr, cc]
    f = plan.timing.drive_frequency_hz
    omega = 2 * math.pi * f
    planned = float(np.degrees(phases[0]))
    view_block = {"point_m": [float(v) for v in view], "pixel": [float(row), float(col)],
                  "inside_frames": bool(inside), "pixels_fitted": int(zz.size),
                  "planned_phase_deg": planned}
    if abs(k_v) < 0.1 * k:
        findings.append(_finding("analyse.along_knife",
                                 "the wave travels along the knife edge (the picture's "
                                 "horizontal): the cutoff barely sees it, so its phase and "
                                 "pressure at the view are not measured; turn the knife edge"))
        return view_block, None, None, None
    if rod and kind == "standing":
        notes.append("rod stop and a standing wave: the square of the deflection mixes the two "
                     "counter-waves, so the phase at the view is not measured (use a knife)")
        return view_block, None, None, None
    if rod:
        # eps^2 shows as Im[-i R E^2 exp(2 i phi)] (R > 0): E from the square root of the
        # second harmonic's fit at twice the wave vector, sign resolved towards the plan
        alpha2, beta2, cov, rms = demod.two_wave_fit(zz, x, y, 2 * k_u, 2 * k_v)
        alpha = np.sqrt(1j * alpha2)  # E^2 = i Z2 / R, R > 0: the phase of E up to pi
        beta = 0.0
        p_rel = demod.pressure_phasor_from_gradient(alpha, beta, k_v)
        if abs(np.angle(p_rel)) > math.pi / 2:
            p_rel = -p_rel
        notes.append("rod stop: the phase is measured from the square of the deflection, so "
                     "it is known modulo 180 deg; the branch nearer the plan is reported")
        d_sigma = math.sqrt(max(cov[0, 0], 0.0)) / max(abs(alpha2), 1e-300) / 2
    else:
        alpha, beta, cov, rms = demod.two_wave_fit(zz, x, y, k_u, k_v)
        p_rel = demod.pressure_phasor_from_gradient(alpha, beta, k_v)
        var = cov[0, 0] + cov[1, 1]
        d_sigma = math.sqrt(max(var, 0.0)) / max(abs(alpha - beta), 1e-300)
    # The frames show the line-of-sight integral Q of the pressure, whose phase at the view
    # differs from the pressure's there by the projection's phase (a spreading beam): the
    # plan is right when Q's phasor has that phase, not zero.
    projection = _projection_phase(rig, grid, f, speed)
    view_block["line_of_sight_phase_deg"] = math.degrees(projection)
    view_block["phase_model"] = ("the frames show the line-of-sight integral of the field "
                                 "model's pressure (stages.field.view_projection); its phase "
                                 "at the view is taken out before the comparison")
    if abs(math.degrees(projection)) > 2.0:
        notes.append(f"the line-of-sight integral's phase at the view differs from the "
                     f"pressure's by {math.degrees(projection):+.1f} deg in the field model "
                     "(a spreading beam seen through its depth): the comparison allows for it")
    delta = float(np.angle(p_rel * cmath.exp(-1j * projection)))
    if model_map is not None and not rod:
        # a curved pattern: the field model's own picture, fitted to the frames near the
        # view, carries the projection, the spreading and the cutoff's response at once
        m = model_map[rr, cc]
        norm = float(np.sum(np.abs(m) ** 2))
        if norm > 0 and zz.size >= 12:
            c = complex(np.sum(np.conj(m) * zz) / norm)
            resid = zz - c * m
            var_c = float(np.sum(np.abs(resid) ** 2)) / (2.0 * max(zz.size - 1, 1))
            if abs(c) > 0:
                view_block["phase_difference_two_wave_deg"] = math.degrees(delta)
                delta = float(np.angle(c))
                d_sigma = math.sqrt(var_c / norm) / abs(c)
                view_block["phase_model"] = (
                    "the field model's line-of-sight picture (preview's engine) fitted to the "
                    "frames within the window around the view: its complex factor's phase is "
                    "the wave's lag (the map departs from plane waves, see wave.wavelength_model)")
    measured = planned + math.degrees(delta)
    change = -delta / omega  # the wave arrives later by this much than the plan says
    period = 1.0 / f
    old = rig.strobe.calibration_offset
    new = old + change
    new = (new + period / 2) % period - period / 2 if abs(new) < 1.0 else new
    view_block.update({
        "measured_phase_deg": (measured + 180.0) % 360.0 - 180.0,
        "phase_difference_deg": math.degrees(delta),
        "phase_uncertainty_deg": math.degrees(d_sigma),
    })
    calib = {"rig_offset_s": old, "change_s": change, "offset_s": new,
             "offset_deg": math.degrees(new * omega),
             "uncertainty_s": d_sigma / omega,
             "meaning": "strobe.calibration_offset that makes the plan's phase at the view "
                        "agree with the frames (positive: the wave arrives later)"}
    if abs(math.degrees(delta)) > 2.0:
        findings.append(_finding(
            "analyse.calibration",
            f"the wave at the view is {math.degrees(delta):+.1f} deg from the plan "
            f"(+- {math.degrees(d_sigma):.1f}); set strobe.calibration_offset = "
            f"\"{new * 1e9:.4g} ns\" (analyse --write-rig FILE writes it)"))

    # --- deflection and pressure through the cutoff's calibration -----------------------
    opt = rig.optics
    if rod:
        notes.append("rod stop: a dark-field image has no background level to take the "
                     "contrast against, so the deflection and pressure are not measured")
        return view_block, calib, None, None
    if lens is not None:
        sens, sens_how = _lens_sensitivity(lens, grid, stack, background), "calibration lens"
    if sens is None or opt is None:
        notes.append("no cutoff calibration (needs the optical layout or a calibration lens): "
                     "deflection and pressure are not measured")
        return view_block, calib, None, None
    passes = opt.passes
    length = opt.sound_path
    kk = gladstone_dale(rig)
    grad = abs(alpha) + abs(beta)  # the largest contrast of the pattern
    eps_peak = grad / sens
    eps_sigma = math.sqrt(max(cov[0, 0] + cov[1, 1], 0.0)) / sens
    eps_view = abs(alpha + beta) / sens
    # |p_rel| = |alpha - beta| / k_v: the deflection amplitude |alpha - beta| / S through the
    # plane-wave chain eps = passes L K k p / c^2, inverted
    p_amp = demod.pressure_from_deflection(abs(alpha - beta) / sens, passes, length, kk,
                                           abs(k_v), speed)
    deflection = {"method": sens_how, "peak_rad": eps_peak,
                  "peak_uncertainty_rad": eps_sigma, "view_rad": eps_view,
                  "view_uncertainty_rad": eps_sigma, "sensitivity_per_rad": sens}
    p_sigma = p_amp * eps_sigma / max(eps_peak, 1e-300)
    planned_p = None
    if plan.optics is not None:
        planned_p = plan.optics.pressure_amplitude_pa
    elif plan.field is not None and plan.field.level_known:
        planned_p = plan.field.pressure_amplitude_pa
    pressure = {"plane_wave_at_view_pa": float(p_amp),
                "plane_wave_uncertainty_pa": float(p_sigma),
                "path_m": length, "passes": passes,
                "planned_at_view_pa": planned_p,
                "spl_at_view_db": (float(acoustics.spl_from_pressure_amplitude(p_amp))
                                   if p_amp > 0 else None)}
    return view_block, calib, pressure, deflection


def _projection_phase(rig, grid, frequency, speed):
    """arg(Q / p) at the view: the line-of-sight integral's phase against the pressure's
    (0 without an emitter, e.g. a plane wave given only by its wavelength). [rad]"""
    if rig.emitter is None:
        return 0.0
    from .stages.field import line_of_sight_phase

    deg = line_of_sight_phase(rig, grid, frequency, speed)
    return 0.0 if deg is None else math.radians(deg)


def _lens_sensitivity(lens, grid, stack, background):
    """Schardin: contrast slope across a lens frame (against the flat or the mean level)."""
    frame, focal = lens
    arr = _as_picture(frame, "--lens", stack.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        c = np.where(background > 0, arr / background - 1.0, np.nan)
    ok = np.isfinite(c) & (np.abs(c) < 0.8)  # inside the linear range
    rr, cc = np.nonzero(ok)
    y = ((grid.ny - 1) / 2.0 - rr) * grid.pixel_m
    x = (cc - (grid.nx - 1) / 2.0) * grid.pixel_m
    a = np.stack([np.ones_like(x), x, y], axis=1)
    sol, *_ = np.linalg.lstsq(a, c[rr, cc], rcond=None)
    return float(demod.lens_sensitivity(sol[2], focal))


def _abel(rig, plan, grid, contrast, good, wave, sens, notes):
    """Pressure at the view from an Abel inversion of the gradient map (axisymmetric)."""
    ems = rig.emitters or []
    if len(ems) != 1 or wave is None or wave["kind"] is None:
        return None
    em = ems[0]
    axis = np.asarray(em.axis, float) / np.linalg.norm(em.axis)
    if abs(axis @ grid.light_axis) > 1e-6:
        return None
    rows_axis_col = grid.pixel_of(np.asarray(em.position, float))[1]
    col0 = int(round(rows_axis_col))
    ny, nx = contrast.shape
    if not (0 <= col0 < nx):
        return None
    from .stages.field import view_point
    from .stages.optics import gladstone_dale

    row_v, _ = grid.pixel_of(view_point(rig))
    lam_px = wave["wavelength_m"] / grid.pixel_m
    r0 = max(0, int(row_v - lam_px))
    r1 = min(ny, int(row_v + lam_px) + 1)
    if r1 - r0 < 8:
        return None
    width = min(col0, nx - 1 - col0) + 1 if 0 < col0 < nx - 1 else max(col0 + 1, nx - col0)
    block = np.nan_to_num(contrast[r0:r1])
    right = block[:, col0:col0 + width]
    left = block[:, col0::-1][:, :width] if col0 > 0 else right
    m = min(right.shape[1], left.shape[1])
    half = 0.5 * (right[:, :m] + left[:, :m])
    if m < 8:
        return None
    profile = np.abs(half).mean(axis=0)
    edge = profile[-max(3, m // 20):].mean()
    if not edge < 0.1 * profile.max():
        notes.append("no Abel inversion: the field is not contained in the frames (its "
                     "projection keeps 10 % or more of its peak at the frame's edge)")
        return None
    inv = invert_abel(half, grid.pixel_m)  # d n'/dv times passes S, per metre
    opt = rig.optics
    kd = np.asarray(wave["direction"]) * 2 * math.pi / wave["wavelength_m"]
    k_v = float(kd @ grid.v)
    k_u = float(kd @ grid.u)
    if abs(k_v) < 1e-9:
        return None
    rows = np.arange(r0, r1)
    y = (row_v - rows) * grid.pixel_m
    on_axis = inv[:, 0]
    alpha, beta, cov, _ = demod.two_wave_fit(on_axis, np.zeros_like(y), y, k_u * 0, k_v)
    p_rel = demod.pressure_phasor_from_gradient(alpha, beta, k_v)
    kk = gladstone_dale(rig)
    speed = wave["speed_of_sound_m_s"]
    scale = speed**2 / (sens * opt.passes * kk)
    p = abs(p_rel) * scale
    sigma = math.sqrt(max(cov[0, 0] + cov[1, 1], 0.0)) / abs(k_v) * scale
    amp_map = (np.abs(inv) / abs(k_v) * scale).astype(np.float32)
    notes.append("Abel inversion (PyAbel, Dasch three-point) of the rows within one "
                 f"wavelength of the view, about the emitter's axis at column {col0}")
    return {"abel_at_view_pa": float(p), "abel_uncertainty_pa": float(sigma)}, amp_map


def invert_abel(half, pixel_m):
    """Inverse Abel transform of each row of a half-image whose column 0 is the axis.

    Real and imaginary parts are inverted separately (the transform is linear). Uses
    PyAbel's three-point method (Dasch 1992). Returns the field per metre of path.
    """
    import abel

    half = np.asarray(half)
    out = abel.dasch.three_point_transform(np.ascontiguousarray(half.real), basis_dir=None,
                                           dr=pixel_m, direction="inverse")
    if np.iscomplexobj(half):
        out = out + 1j * abel.dasch.three_point_transform(
            np.ascontiguousarray(half.imag), basis_dir=None, dr=pixel_m, direction="inverse")
    return out


# --- output ----------------------------------------------------------------------------------


def summary_json(analysis: Analysis) -> str:
    import json

    from .plan import jsonable

    return json.dumps(jsonable(analysis.summary), indent=2, allow_nan=False) + "\n"


def summary_text(analysis: Analysis) -> str:
    s = analysis.summary
    lines = [f"analyse: {s['rig']}: {s['frames']['count']} frames of "
             f"{s['frames']['width_px']} x {s['frames']['height_px']} px, "
             f"{s['frames']['bit_depth']}-bit, phases from {s['frames']['phases_from']}"]
    d = s["demodulation"]
    lines.append(f"  noise {d['noise_grey']:.3g} grey per frame; "
                 f"{d['pixels_above_threshold']:.1%} of the pixels at SNR >= "
                 f"{d['snr_threshold']:g}")
    w = s["wave"]
    if w:
        lines.append(f"  wave ({w['kind']}, {w['method']}): wavelength "
                     f"{w['wavelength_m'] * 1e3:.4f} +- {w['wavelength_uncertainty_m'] * 1e3:.4f} "
                     f"mm (plan {w['planned_wavelength_m'] * 1e3:.4f} mm)")
        t_unc = w["air_temperature_uncertainty_k"] or math.nan
        lines.append(f"  speed of sound {w['speed_of_sound_m_s']:.2f} +- "
                     f"{w['speed_of_sound_uncertainty_m_s']:.2f} m/s (plan "
                     f"{w['planned_speed_of_sound_m_s']:.2f}); air at "
                     f"{w['air_temperature_c']:.1f} +- {t_unc:.1f} degC (plan "
                     f"{w['planned_air_temperature_c']:.1f})")
    v = s["view"]
    if v and "measured_phase_deg" in v:
        lines.append(f"  phase at the view {v['measured_phase_deg']:.2f} +- "
                     f"{v['phase_uncertainty_deg']:.2f} deg in frame 0 (plan "
                     f"{v['planned_phase_deg']:.2f}): {v['phase_difference_deg']:+.2f} deg")
    c = s["calibration"]
    if c:
        lines.append(f"  calibration_offset {c['offset_s'] * 1e9:.4g} +- "
                     f"{c['uncertainty_s'] * 1e9:.2g} ns ({c['offset_deg']:.2f} deg; the rig has "
                     f"{c['rig_offset_s'] * 1e9:.4g} ns)")
    p = s["pressure"]
    if p:
        text = (f"  pressure at the view {p['plane_wave_at_view_pa']:.4g} +- "
                f"{p['plane_wave_uncertainty_pa']:.2g} Pa (plane wave over "
                f"{p['path_m'] * 1e3:.4g} mm)")
        if p.get("abel_at_view_pa") is not None:
            text += (f"; Abel {p['abel_at_view_pa']:.4g} +- {p['abel_uncertainty_pa']:.2g} Pa")
        if p.get("planned_at_view_pa"):
            text += f"; plan {p['planned_at_view_pa']:.4g} Pa"
        lines.append(text)
    for f in s["findings"]:
        lines.append(f"  {f['severity']}: {f['code']}: {f['message']}")
    for note in s["notes"]:
        lines.append(f"  note: {note}")
    return "\n".join(clean(line) for line in lines) + "\n"


def _tiff_bytes(arr) -> bytes:
    import io

    import tifffile

    buf = io.BytesIO()
    tifffile.imwrite(buf, np.asarray(arr, dtype=np.float32))
    return buf.getvalue()


def map_figure_png(analysis: Analysis, which: str) -> bytes:
    """A map as PNG with a colour bar and axes in millimetres (matplotlib Figure API)."""
    import io

    buf = io.BytesIO()
    map_figure(analysis, which).savefig(buf, format="png", metadata={"Software": None})
    return buf.getvalue()


def map_figure(analysis: Analysis, which: str):
    """The amplitude or phase map as a matplotlib Figure (no pyplot)."""
    from matplotlib.figure import Figure

    g = analysis.grid
    x, y = g.offsets()
    extent = [(x[0] - g.pixel_m / 2) * 1e3, (x[-1] + g.pixel_m / 2) * 1e3,
              (y[-1] - g.pixel_m / 2) * 1e3, (y[0] + g.pixel_m / 2) * 1e3]
    fig = Figure(figsize=(6.4, 4.8), dpi=120)
    ax = fig.add_subplot()
    if which == "phase":
        data, cmap, label = analysis.phase_deg, "twilight", "phase of the wave's harmonic [deg]"
        im = ax.imshow(data, extent=extent, cmap=cmap, vmin=-180, vmax=180,
                       interpolation="nearest")
    else:
        data, label = analysis.amplitude, "contrast amplitude |dI| / I0"
        top = float(np.nanpercentile(data, 99.5)) if np.isfinite(data).any() else 1.0
        im = ax.imshow(data, extent=extent, cmap="viridis", vmin=0, vmax=top or 1.0,
                       interpolation="nearest")
    fig.colorbar(im, ax=ax, label=label)
    ax.set_xlabel("along u [mm]")
    ax.set_ylabel("along v (up) [mm]")
    v = analysis.summary.get("view")
    if v:
        row, col = v["pixel"]
        ax.plot([(col - (g.nx - 1) / 2) * g.pixel_m * 1e3],
                [((g.ny - 1) / 2 - row) * g.pixel_m * 1e3], marker="+", color="red", ms=12)
    ax.set_title(f"{analysis.summary['rig']}: {which}")
    return fig


def output_files(analysis: Analysis) -> dict[str, bytes]:
    """Every file of ``-o DIR``: name -> bytes (built before anything is written)."""
    files = {"analyse.json": summary_json(analysis).encode("utf-8"),
             "amplitude.tif": _tiff_bytes(analysis.amplitude),
             "phase_deg.tif": _tiff_bytes(analysis.phase_deg),
             "snr.tif": _tiff_bytes(analysis.snr),
             "amplitude.png": map_figure_png(analysis, "amplitude"),
             "phase.png": map_figure_png(analysis, "phase")}
    if analysis.second_amplitude is not None:
        files["amplitude2.tif"] = _tiff_bytes(analysis.second_amplitude)
        files["phase2_deg.tif"] = _tiff_bytes(analysis.second_phase_deg)
    if analysis.pressure_abel is not None:
        files["pressure_abel_pa.tif"] = _tiff_bytes(analysis.pressure_abel)
    return files


def rig_with_offset(text: str, offset_s: float) -> str:
    """The rig text with strobe.calibration_offset set (comments kept; re-read to check)."""
    from .errors import RigError
    from .rig import loads_rig
    from .rigedit import edit_rig_text, quantity_text

    new = edit_rig_text(text, {("strobe", "calibration_offset"):
                               f'"{quantity_text(offset_s, "time")}"'})
    rig = loads_rig(new)
    if not math.isclose(rig.strobe.calibration_offset, offset_s, rel_tol=1e-9, abs_tol=1e-15):
        raise RigError("strobe.calibration_offset", None, "cannot write the rig: the edited "
                       "file does not read back the measured offset")
    return new
