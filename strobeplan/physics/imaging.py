"""Schlieren layout: what the camera sees of the test region and how sensitive it is.

Two layouts:

* **z-type**: a source at the focus of mirror 1 (focal length f1), a parallel beam through the
  test region, mirror 2 (f2) focusing the source image onto the cutoff, each mirror tilted by
  the offset angle theta (half the angle between its incident and reflected beams).
* **double-pass** (single mirror, coincident): source and cutoff at the mirror's centre of
  curvature R = 2 f (a beamsplitter separates them); the light crosses the test region twice.

The camera lens sits just behind the cutoff, focused on the test region at the mirror: its
object distance is f2 (z-type) or R (double-pass). Thin-lens imaging throughout.

Sensitivity (Settles 2001, eq. 3.6): a deflection eps moves the source image by f2 eps at
the cutoff (R eps per pass in double pass, counted in ``passes`` of the deflection), so the
knife-edge contrast is dC/d eps = f2 / a, a the unobstructed height of the source image.

Every function broadcasts over numpy arrays.

References
----------
1. G. S. Settles, *Schlieren and Shadowgraph Techniques*, Springer (2001), ch. 3
   (sensitivity f2/a, measuring range, z-type and double-pass layouts, diffraction limit).
   doi:10.1007/978-3-642-56640-0
2. W. J. Smith, *Modern Optical Engineering*, 4th ed., McGraw-Hill (2008), ch. 5
   (astigmatism and coma of a spherical mirror used off axis: sagittal and tangential foci
   f/cos(theta) and f cos(theta); tangential coma 3 theta D^2 / (16 f) at the focus).
3. E. Hecht, *Optics*, 5th ed., Pearson (2017), sec. 10.2 (diffraction: angular resolution
   about lambda / aperture; Airy disc 2.44 lambda N).
"""

from __future__ import annotations

import numpy as np


def _a(x):
    return np.asarray(x, dtype=float)


def _out(x):
    return x if np.ndim(x) else float(x)


def lens_object_distance(layout_double_pass, focal_length):
    """Distance from the camera lens (at the cutoff) to the test region at the mirror.

    Parameters
    ----------
    layout_double_pass : bool or ndarray
        True for the double-pass layout (cutoff at the centre of curvature). [1]
    focal_length : float or ndarray
        Focal length of the (second) mirror. [m]

    Returns
    -------
    float or ndarray
        f2 (z-type) or 2 f (double-pass). [m]

    References
    ----------
    1. Settles (2001), ch. 3 (the camera focused on the test region through the cutoff).
    """
    return _out(np.where(layout_double_pass, 2.0, 1.0) * _a(focal_length))


def magnification(lens_focal_length, object_distance):
    """Thin-lens magnification m = f / (u - f) of the test region onto the sensor.

    Parameters
    ----------
    lens_focal_length : float or ndarray
        Camera lens focal length. [m]
    object_distance : float or ndarray
        Lens to test region (the mirror). [m]

    Returns
    -------
    float or ndarray
        Image size over object size (positive); inf when the lens cannot focus (u <= f). [1]

    References
    ----------
    1. Hecht (2017), eq. 5.17 and 5.24 (Gaussian lens formula, transverse magnification).
    """
    f, u = _a(lens_focal_length), _a(object_distance)
    return _out(np.where(u > f, f / np.where(u > f, u - f, 1.0), np.inf))


def object_pixel(pixel_pitch, magnification):
    """Size in the test region that one pixel sees. [m]

    Parameters
    ----------
    pixel_pitch : float or ndarray
        Sensor pixel pitch. [m]
    magnification : float or ndarray
        Lens magnification. [1]

    References
    ----------
    1. Hecht (2017), eq. 5.24.
    """
    return _out(_a(pixel_pitch) / _a(magnification))


def field_of_view(pixel_pitch, pixels, magnification):
    """Extent of the test region covered by ``pixels`` pixels. [m]

    Parameters
    ----------
    pixel_pitch : float or ndarray
        Sensor pixel pitch. [m]
    pixels : float or ndarray
        Pixel count along the direction. [1]
    magnification : float or ndarray
        Lens magnification. [1]

    References
    ----------
    1. Hecht (2017), eq. 5.24.
    """
    return _out(_a(pixel_pitch) * _a(pixels) / _a(magnification))


def sensor_fill(mirror_diameter, magnification, sensor_height):
    """Fraction of the sensor's short side the mirror's image spans (> 1: overfilled). [1]

    Parameters
    ----------
    mirror_diameter : float or ndarray
        Mirror (field) diameter. [m]
    magnification : float or ndarray
        Lens magnification. [1]
    sensor_height : float or ndarray
        Sensor short side (pitch x rows). [m]

    References
    ----------
    1. Hecht (2017), eq. 5.24.
    """
    return _out(_a(mirror_diameter) * _a(magnification) / _a(sensor_height))


def filling_focal_length(mirror_diameter, sensor_height, object_distance):
    """Lens focal length that images the mirror exactly onto the sensor's short side. [m]

    From m = h / D and f = u m / (1 + m) (thin lens).

    Parameters
    ----------
    mirror_diameter : float or ndarray
        Mirror diameter. [m]
    sensor_height : float or ndarray
        Sensor short side. [m]
    object_distance : float or ndarray
        Lens to mirror. [m]

    References
    ----------
    1. Hecht (2017), eq. 5.17 and 5.24.
    """
    m = _a(sensor_height) / _a(mirror_diameter)
    return _out(_a(object_distance) * m / (1.0 + m))


def source_image_size(source_size, focal_length_1, focal_length_2):
    """Size of the source image at the cutoff: source x f2 / f1 (1:1 in double pass). [m]

    Parameters
    ----------
    source_size : float or ndarray
        Source (slit or die) width or height. [m]
    focal_length_1, focal_length_2 : float or ndarray
        Focal lengths of the collimating and focusing mirrors. [m]

    References
    ----------
    1. Settles (2001), sec. 3.2 (the source imaged onto the cutoff with magnification f2/f1).
    """
    return _out(_a(source_size) * _a(focal_length_2) / _a(focal_length_1))


def unobstructed_height(image_height, cut_fraction):
    """Height a of the source image left open by a knife edge cutting ``cut_fraction``. [m]

    Parameters
    ----------
    image_height : float or ndarray
        Source image height at the cutoff (across the knife edge). [m]
    cut_fraction : float or ndarray
        Fraction of the image the knife blocks with no disturbance. [1]

    References
    ----------
    1. Settles (2001), sec. 3.2 (a, the unobstructed height of the source image).
    """
    return _out(_a(image_height) * (1.0 - _a(cut_fraction)))


def sensitivity(cutoff_distance, opening):
    """Knife-edge contrast per unit deflection, dC/d eps = f2 / a. [1/rad]

    Parameters
    ----------
    cutoff_distance : float or ndarray
        Focusing mirror to cutoff (f2, or R in double pass). [m]
    opening : float or ndarray
        Unobstructed source-image height a. [m]

    References
    ----------
    1. Settles (2001), eq. 3.6.
    """
    return _out(_a(cutoff_distance) / _a(opening))


def measuring_range(cutoff_distance, opening, blocked):
    """Largest deflection before a knife edge clips, min(a, blocked height) / f2. [rad]

    Towards the knife the image is fully cut after a shift a; away from it, fully open after
    the blocked height (h - a).

    Parameters
    ----------
    cutoff_distance : float or ndarray
        Focusing mirror to cutoff. [m]
    opening : float or ndarray
        Unobstructed height a. [m]
    blocked : float or ndarray
        Blocked height h - a. [m]

    References
    ----------
    1. Settles (2001), sec. 3.4 (measuring range eps_max = a / f2 for a half cut).
    """
    return _out(np.minimum(_a(opening), _a(blocked)) / _a(cutoff_distance))


def diffraction_resolution(light_wavelength, cutoff_distance, opening):
    """Smallest resolvable detail in the test region, about lambda f2 / a. [m]

    The cutoff is the aperture stop of the schlieren image: the unobstructed height a at the
    distance f2 sets an angular resolution lambda / a, i.e. lambda f2 / a at the test region.

    Parameters
    ----------
    light_wavelength : float or ndarray
        Light wavelength. [m]
    cutoff_distance : float or ndarray
        Test region (mirror) to cutoff. [m]
    opening : float or ndarray
        Unobstructed height a. [m]

    References
    ----------
    1. Settles (2001), sec. 3.6 (diffraction limit of schlieren resolution).
    2. Hecht (2017), sec. 10.2.
    """
    return _out(_a(light_wavelength) * _a(cutoff_distance) / _a(opening))


def astigmatic_split(focal_length, offset_angle):
    """Distance between the sagittal and tangential foci of a tilted spherical mirror. [m]

    f_s - f_t = f / cos(theta) - f cos(theta) = f sin(theta) tan(theta) (~ f theta^2). In a
    z-type the two mirrors' astigmatism adds (Settles), so the layout's split is twice this.

    Parameters
    ----------
    focal_length : float or ndarray
        Mirror focal length. [m]
    offset_angle : float or ndarray
        Offset angle theta (half the angle between incident and reflected beams). [rad]

    References
    ----------
    1. Smith (2008), ch. 5 (off-axis spherical mirror: f_t = f cos theta, f_s = f / cos theta).
    2. Settles (2001), sec. 3.3 (z-type: coma cancels, astigmatism does not).
    """
    f, t = _a(focal_length), _a(offset_angle)
    return _out(f * np.sin(t) * np.tan(t))


def astigmatic_blur(split, mirror_diameter, focal_length):
    """Diameter of the circle of least confusion between the astigmatic foci. [m]

    The converging beam of diameter D over f spreads to D split / (2 f) halfway between the
    foci (similar triangles).

    Parameters
    ----------
    split : float or ndarray
        Focal split (sagittal minus tangential). [m]
    mirror_diameter : float or ndarray
        Beam (mirror) diameter. [m]
    focal_length : float or ndarray
        Focal length. [m]

    References
    ----------
    1. Smith (2008), ch. 5 (the blur between the astigmatic focal lines).
    """
    return _out(_a(split) * _a(mirror_diameter) / (2.0 * _a(focal_length)))


def coma_length(mirror_diameter, focal_length, offset_angle):
    """Tangential coma of one spherical mirror tilted by theta, at its focus: 3 theta D^2/(16 f).

    The angular tangential coma of a spherical mirror with the stop at the mirror is
    3 theta / (16 N^2), N = f / D. In a z-type with equal, opposite offset angles the two
    mirrors' coma cancels (Settles); this is the one-mirror figure (the residual when the
    angles differ scales with their difference).

    Parameters
    ----------
    mirror_diameter : float or ndarray
        Mirror diameter D. [m]
    focal_length : float or ndarray
        Focal length f. [m]
    offset_angle : float or ndarray
        Offset angle theta. [rad]

    Returns
    -------
    float or ndarray
        Length of the comatic flare in the focal plane. [m]

    References
    ----------
    1. Smith (2008), ch. 5 and ch. 18 (third-order coma of a spherical mirror).
    2. Settles (2001), sec. 3.3.
    """
    d, f, t = _a(mirror_diameter), _a(focal_length), _a(offset_angle)
    return _out(3.0 * np.abs(t) * d**2 / (16.0 * f))


def double_image_offset(separation, radius, test_distance):
    """Lateral offset between the two passes' images of a point of the test region. [m]

    Source and cutoff a distance s apart at the centre of curvature R: a point at distance d
    in front of the mirror is seen along two lines through it from the source and from the
    cutoff, which meet the mirror s d / (R - d) apart (similar triangles). With a beamsplitter
    on the axis s = 0 and the passes coincide.

    Parameters
    ----------
    separation : float or ndarray
        Source-cutoff separation at the centre of curvature. [m]
    radius : float or ndarray
        Radius of curvature R = 2 f. [m]
    test_distance : float or ndarray
        Test region to mirror. [m]

    References
    ----------
    1. Settles (2001), sec. 4.3 (double-pass systems: the doubled image of an object away
       from the mirror).
    """
    s, r, d = _a(separation), _a(radius), _a(test_distance)
    return _out(s * d / (r - d))


def bench_length(layout_double_pass, focal_length, mirror_diameter, lens_focal_length,
                 mirror_separation):
    """Bench length the layout needs, an estimate. [m]

    z-type: the mirrors' separation (source and cutoff sit between the mirrors, each f from
    its mirror) or f plus the camera behind the cutoff (two lens focal lengths), whichever is
    longer, plus a mirror diameter for the mounts. Double-pass: R = 2 f plus the camera behind
    the beamsplitter (two lens focal lengths) plus a mirror diameter.

    Parameters
    ----------
    layout_double_pass : bool or ndarray
        True for double-pass. [1]
    focal_length : float or ndarray
        Mirror focal length. [m]
    mirror_diameter : float or ndarray
        Mirror diameter. [m]
    lens_focal_length : float or ndarray
        Camera lens focal length. [m]
    mirror_separation : float or ndarray
        z-type mirror separation. [m]

    References
    ----------
    1. Settles (2001), sec. 3.3 and 4.3 (z-type and double-pass arrangements).
    """
    f, d, fl, s = (_a(x) for x in (focal_length, mirror_diameter, lens_focal_length,
                                   mirror_separation))
    z = np.maximum(s, f + 2.0 * fl) + d
    dp = 2.0 * f + 2.0 * fl + d
    return _out(np.where(layout_double_pass, dp, z))
