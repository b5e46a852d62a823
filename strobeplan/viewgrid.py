"""The imaged region as a pixel grid: where each pixel of a preview or a captured frame sits.

One definition for ``preview`` (which draws frames on it) and ``analyse`` (which reads
captured frames on it), so that a pixel means the same point in both.

Conventions
-----------
- ``light_axis``: the direction the light crosses the test region ([view].light_axis).
- ``v`` ("up" in the picture): the first emitter's axis with its part along the light axis
  removed; when the emitter's axis lies along the light axis, the component of +z (or +y)
  perpendicular to it. Rows run top to bottom, so row index grows along -v.
- ``u`` (to the right in the picture, column index grows along +u): ``v x light_axis``.
- ``centre``: [view].centre, else the view point (where strobe.phase is defined).
- ``pixel_m``: the object pixel of the image chain (the camera's pixel projected into the
  test region), else [view].width / 256.
- ``width``/``height``: [view].width/height, else the image chain's field of view, else
  eight sound wavelengths square.
- ``depth``: the span integrated along the light axis, [view].depth, else the larger of
  [view].width and height, else eight sound wavelengths (:func:`light_span`: the field
  section's line-of-sight phase uses the same span).
"""

from __future__ import annotations

import numpy as np

from .quickdc import dataclass

DEFAULT_PIXELS_ACROSS = 256
DEFAULT_WAVELENGTHS_ACROSS = 8.0


@dataclass(frozen=True)
class ViewGrid:
    """Pixel grid over the imaged region (all lengths in metres)."""

    centre: np.ndarray       # (3,) [m]
    u: np.ndarray            # (3,) unit vector, columns grow along +u
    v: np.ndarray            # (3,) unit vector, "up": rows grow along -v
    light_axis: np.ndarray   # (3,) unit vector
    pixel_m: float           # [m] object pixel
    nx: int                  # columns
    ny: int                  # rows
    depth_m: float           # [m] span along the light axis
    samples: int             # samples along the light axis

    @property
    def width_m(self) -> float:
        return self.nx * self.pixel_m

    @property
    def height_m(self) -> float:
        return self.ny * self.pixel_m

    def offsets(self):
        """Column and row offsets of pixel centres from the centre along u and v. [m]"""
        x = (np.arange(self.nx) - (self.nx - 1) / 2.0) * self.pixel_m
        y = ((self.ny - 1) / 2.0 - np.arange(self.ny)) * self.pixel_m
        return x, y

    def points(self) -> np.ndarray:
        """Pixel centres in the plane through ``centre``, shape (ny, nx, 3). [m]"""
        x, y = self.offsets()
        return (self.centre + x[None, :, None] * self.u
                + y[:, None, None] * self.v)

    def pixel_of(self, point) -> tuple[float, float]:
        """(row, column) of a point projected onto the image plane (fractional)."""
        d = np.asarray(point, dtype=float) - self.centre
        col = float(d @ self.u) / self.pixel_m + (self.nx - 1) / 2.0
        row = (self.ny - 1) / 2.0 - float(d @ self.v) / self.pixel_m
        return row, col



def _unit(v) -> np.ndarray:
    a = np.asarray(v, dtype=float)
    return a / np.linalg.norm(a)


def image_axes(light_axis, up_hint) -> tuple[np.ndarray, np.ndarray]:
    """(u, v): the picture's right and up directions for a light axis and a preferred up."""
    ell = _unit(light_axis)
    for hint in (up_hint, (0.0, 0.0, 1.0), (0.0, 1.0, 0.0)):
        if hint is None:
            continue
        h = np.asarray(hint, dtype=float)
        v = h - (h @ ell) * ell
        if np.linalg.norm(v) > 1e-6 * max(np.linalg.norm(h), 1e-300):
            v = _unit(v)
            return _unit(np.cross(v, ell)), v
    raise ValueError("no up direction perpendicular to the light axis")  # pragma: no cover


def light_span(view, wavelength) -> float:
    """The span integrated along the light: [view].depth, else the larger of its width and
    height, else DEFAULT_WAVELENGTHS_ACROSS sound wavelengths. [m]"""
    if view is not None and view.depth is not None:
        return float(view.depth)
    given = max((view.width or 0.0, view.height or 0.0)) if view is not None else 0.0
    return float(given) if given > 0 else DEFAULT_WAVELENGTHS_ACROSS * wavelength


def view_grid(rig, plan) -> ViewGrid:
    """The rig's imaged region as a pixel grid (see the module's conventions)."""
    from .stages.field import view_point

    view = rig.view
    ell = _unit(view.light_axis if view is not None else (1.0, 0.0, 0.0))
    up = rig.emitter.axis if rig.emitter is not None else None
    u, v = image_axes(ell, up)
    centre = (np.asarray(view.centre, dtype=float)
              if view is not None and view.centre is not None else view_point(rig))
    image = getattr(plan, "image", None)
    width = view.width if view is not None else None
    height = view.height if view is not None else None
    if width is None and image is not None and image.field_of_view_m is not None:
        width = float(image.field_of_view_m)
        height = height or float(getattr(image, "field_of_view_height_m", None) or width)
    if width is None:
        speed = float(plan.air.speed_of_sound_m_s)
        width = DEFAULT_WAVELENGTHS_ACROSS * speed / rig.wave.frequency
    if height is None:
        height = width
    if image is not None and image.object_pixel_m:
        pixel = float(image.object_pixel_m)
    else:
        pixel = width / DEFAULT_PIXELS_ACROSS
    nx = max(1, int(round(width / pixel)))
    ny = max(1, int(round(height / pixel)))
    depth = light_span(view, float(plan.air.speed_of_sound_m_s) / rig.wave.frequency)
    samples = view.samples if view is not None else 64
    return ViewGrid(centre=centre, u=u, v=v, light_axis=ell, pixel_m=pixel, nx=nx, ny=ny,
                    depth_m=depth, samples=int(samples))
