"""Light budget and noise: photoelectrons per pixel from the LED's radiance, and the SNR.

Camera equation of a schlieren system. Radiance is conserved through mirrors and lenses
(up to their losses), so the field lens-free chain is: an LED of radiant flux Phi over an
emitting area A_e (Lambertian) has the radiance L = Phi / (pi A_e); the slit (or the die) of
area A_s at the distance d_s from the collimating mirror (f1 in a z-type, R = 2 f in double
pass) subtends the solid angle A_s / d_s^2 there; a pixel collects the light crossing its
object area A_p in the test region within that solid angle:

    P_pixel = tau L A_p A_s T_cutoff / d_s^2          [W]

with tau the product of the transmissions (mirror reflectances, beamsplitter, lens) and
T_cutoff the fraction of the source image the cutoff passes. Photoelectrons per flash:
N = QE E_flash lambda / (h c), E_flash the optical energy of the flash at the pixel.

Noise per pixel: shot (Poisson, variance N), read (sigma_r), quantisation (a uniform step
q = full_well / 2^bits: variance q^2 / 12) and dark current; the signal's SNR improves by
the binning factor b (b x b pixels summed) and by sqrt(frames averaged).

Every function broadcasts over numpy arrays.

References
----------
1. R. W. Boyd, *Radiometry and the Detection of Optical Radiation*, Wiley (1983), ch. 5
   (conservation of radiance; flux = L x etendue).
2. EMVA Standard 1288, release 4.0 (2021), sec. 2 (linear camera model: photons ->
   electrons by the quantum efficiency; shot, read and quantisation noise q^2/12).
3. A. Rose, *Vision: Human and Electronic*, Plenum (1973) (SNR >= 5 to detect a feature;
   common practice).
4. E. F. Schubert, *Light-Emitting Diodes*, 2nd ed., Cambridge (2006), ch. 5 (Lambertian
   emission; efficiency droop of the output at high current).
"""

from __future__ import annotations

import numpy as np

PLANCK = 6.62607015e-34  # [J s], SI 2019 exact
LIGHT_SPEED = 299792458.0  # [m/s], exact


def _a(x):
    return np.asarray(x, dtype=float)


def _out(x):
    return x if np.ndim(x) else float(x)


def relative_output(current, table_current, table_ratio):
    """Relative optical output at a current from a datasheet curve (droop included). [1]

    Piecewise linear through (0, 0) and the table; beyond the last point the last segment's
    slope continues (an extrapolation the caller should flag). Without a table (empty
    arrays), output is proportional to current with ratio 1 at 1 A.

    Parameters
    ----------
    current : float or ndarray
        LED current. [A]
    table_current : sequence of float
        Datasheet currents, increasing. [A]
    table_ratio : sequence of float
        Relative output at those currents. [1]

    References
    ----------
    1. Schubert (2006), ch. 5 (sub-linear output at high current).
    """
    i = _a(current)
    xs = np.concatenate(([0.0], np.asarray(table_current, dtype=float)))
    ys = np.concatenate(([0.0], np.asarray(table_ratio, dtype=float)))
    if xs.size < 2:
        return _out(i)
    slope = (ys[-1] - ys[-2]) / (xs[-1] - xs[-2])
    inside = np.interp(i, xs, ys)
    return _out(np.where(i > xs[-1], ys[-1] + slope * (i - xs[-1]), inside))


def radiant_flux(current, reference_current, reference_flux, table_current=(),
                 table_ratio=()):
    """LED radiant flux at a current, scaled from a datasheet rating by the relative output.

    Parameters
    ----------
    current : float or ndarray
        LED current. [A]
    reference_current : float
        Current of the datasheet's flux rating. [A]
    reference_flux : float
        Radiant flux at that current. [W]
    table_current, table_ratio : sequence of float
        Relative output curve (see :func:`relative_output`). [A], [1]

    References
    ----------
    1. Schubert (2006), ch. 5.
    """
    r = _a(relative_output(current, table_current, table_ratio))
    r0 = _a(relative_output(reference_current, table_current, table_ratio))
    return _out(_a(reference_flux) * r / r0)


def lambertian_radiance(flux, emitting_area):
    """Radiance of a flat Lambertian emitter, L = Phi / (pi A). [W m^-2 sr^-1]

    Parameters
    ----------
    flux : float or ndarray
        Radiant flux. [W]
    emitting_area : float or ndarray
        Emitting area. [m^2]

    References
    ----------
    1. Boyd (1983), ch. 5 (a Lambertian surface radiates pi L per unit area).
    """
    return _out(_a(flux) / (np.pi * _a(emitting_area)))


def pixel_power(radiance, transmission, object_pixel, source_area, source_distance):
    """Optical power reaching one pixel, tau L A_p A_s / d_s^2. [W]

    Parameters
    ----------
    radiance : float or ndarray
        Source radiance. [W m^-2 sr^-1]
    transmission : float or ndarray
        Product of mirror reflectances, beamsplitter, lens and cutoff transmissions. [1]
    object_pixel : float or ndarray
        Side of the square a pixel sees in the test region. [m]
    source_area : float or ndarray
        Lit source area (slit within the die). [m^2]
    source_distance : float or ndarray
        Source to collimating mirror (f1, or R in double pass). [m]

    References
    ----------
    1. Boyd (1983), ch. 5 (flux = radiance x etendue A_p A_s / d^2 for small angles).
    """
    return _out(_a(radiance) * _a(transmission) * _a(object_pixel) ** 2 * _a(source_area)
                / _a(source_distance) ** 2)


def photoelectrons(energy, wavelength, quantum_efficiency):
    """Photoelectrons from an optical energy, QE E lambda / (h c). [e-]

    Parameters
    ----------
    energy : float or ndarray
        Optical energy on the pixel. [J]
    wavelength : float or ndarray
        (Photon-weighted mean) wavelength. [m]
    quantum_efficiency : float or ndarray
        Electrons per photon. [1]

    References
    ----------
    1. EMVA 1288 (2021), eq. 1 and 2.
    """
    return _out(_a(energy) * _a(wavelength) / (PLANCK * LIGHT_SPEED)
                * _a(quantum_efficiency))


def lens_pass(pupil_diameter, image_width, image_height):
    """Fraction of the source image at the cutoff that fits through the lens pupil. [1]

    Parameters
    ----------
    pupil_diameter : float or ndarray
        Entrance pupil (focal length / f-number). [m]
    image_width, image_height : float or ndarray
        Source image size at the cutoff (the lens sits just behind it). [m]

    References
    ----------
    1. Boyd (1983), ch. 5 (an aperture smaller than the beam clips it in proportion).
    """
    p = _a(pupil_diameter)
    return _out(np.minimum(1.0, p / _a(image_width)) * np.minimum(1.0, p / _a(image_height)))


def quantisation_noise(full_well, bit_depth):
    """RMS quantisation noise in electrons, step / sqrt(12), step = full_well / 2^bits. [e-]

    Parameters
    ----------
    full_well : float or ndarray
        Full-well capacity mapped to full scale. [e-]
    bit_depth : float or ndarray
        ADC bits. [1]

    References
    ----------
    1. EMVA 1288 (2021), eq. 6 (quantisation variance q^2 / 12).
    """
    return _out(_a(full_well) / 2.0 ** _a(bit_depth) / np.sqrt(12.0))


def noise(mean_electrons, read_noise, full_well, bit_depth, dark_electrons=0.0):
    """Temporal noise of one pixel: shot, read, quantisation and dark. [e-]

    Parameters
    ----------
    mean_electrons : float or ndarray
        Mean signal. [e-]
    read_noise : float or ndarray
        Read noise (RMS). [e-]
    full_well : float or ndarray
        Full-well capacity. [e-]
    bit_depth : float or ndarray
        ADC bits. [1]
    dark_electrons : float or ndarray
        Mean dark electrons in the exposure (Poisson). [e-]

    References
    ----------
    1. EMVA 1288 (2021), eq. 7 (total temporal variance).
    """
    q = _a(quantisation_noise(full_well, bit_depth))
    var = (np.maximum(_a(mean_electrons), 0.0) + _a(read_noise) ** 2 + q**2
           + np.maximum(_a(dark_electrons), 0.0))
    return _out(np.sqrt(var))


def snr(signal_electrons, noise_electrons, binning=1, frames=1):
    """Signal-to-noise ratio after b x b binning and averaging n frames, S/sigma b sqrt(n). [1]

    Parameters
    ----------
    signal_electrons : float or ndarray
        Signal amplitude per pixel per frame. [e-]
    noise_electrons : float or ndarray
        Noise per pixel per frame. [e-]
    binning : float or ndarray
        Side of the square of pixels summed. [1]
    frames : float or ndarray
        Frames averaged. [1]

    References
    ----------
    1. EMVA 1288 (2021), sec. 2 (independent pixels and frames add in variance).
    """
    n = _a(noise_electrons)
    ratio = _a(signal_electrons) / np.where(n > 0, n, np.inf)
    return _out(ratio * _a(binning) * np.sqrt(_a(frames)))


def grey_level(electrons, full_well, bit_depth):
    """Mean grey level (digital number), clipped at full scale. [DN]

    Parameters
    ----------
    electrons : float or ndarray
        Mean electrons. [e-]
    full_well : float or ndarray
        Full well at full scale. [e-]
    bit_depth : float or ndarray
        ADC bits. [1]

    References
    ----------
    1. EMVA 1288 (2021), eq. 3 (linear gain), saturation at full scale.
    """
    full = 2.0 ** _a(bit_depth) - 1.0
    return _out(np.clip(_a(electrons) / _a(full_well), 0.0, 1.0) * full)


def min_detectable_spl(spl, snr, threshold=5.0, order=1):
    """SPL at which the wave's SNR falls to ``threshold``. [dB]

    The signal grows as the pressure to the power ``order`` (1 for a knife edge in its
    linear range, 2 for a dark-field rod stop), the noise stays: SPL_min = SPL +
    (20 / order) log10(threshold / SNR).

    Parameters
    ----------
    spl : float or ndarray
        SPL at the view. [dB]
    snr : float or ndarray
        SNR at that level. [1]
    threshold : float or ndarray
        SNR needed to see the wave (5: Rose criterion, common practice). [1]
    order : float or ndarray
        Order of the response in the pressure. [1]

    References
    ----------
    1. Rose (1973) (detection at SNR ~ 5).
    """
    s = _a(snr)
    safe = np.where(s > 0, s, np.nan)
    return _out(np.where(s > 0, _a(spl) + 20.0 / _a(order) * np.log10(_a(threshold) / safe),
                         np.inf))


def digitise(electrons, read_noise, full_well, bit_depth, rng=None):
    """Grey levels of a frame from its mean electrons, with shot and read noise when seeded.

    Shot noise is Poisson in the electrons, read noise Gaussian; the sum is clipped to
    0..full well and quantised by rounding to 2^bits - 1 full scale (which adds the
    quantisation noise step/sqrt(12)). Without ``rng`` the mean grey levels, rounded.

    Parameters
    ----------
    electrons : ndarray
        Mean photo- and dark electrons per pixel. [e-]
    read_noise : float
        Read noise (RMS). [e-]
    full_well : float
        Electrons at full scale. [e-]
    bit_depth : int
        ADC bits. [1]
    rng : numpy.random.Generator, optional
        Noise source (a seeded generator gives the same frame every run).

    Returns
    -------
    ndarray of uint16
        Grey levels 0..2^bits - 1. [DN]

    References
    ----------
    1. EMVA 1288 (2021), sec. 2 (the linear camera model: Poisson photons, Gaussian read
       noise, uniform quantisation).
    """
    e = np.maximum(_a(electrons), 0.0)
    if rng is not None:
        e = rng.poisson(e).astype(np.float64)
        if read_noise:
            e += rng.normal(0.0, float(read_noise), e.shape)
    full = 2.0 ** int(bit_depth) - 1.0
    dn = np.rint(np.clip(e / float(full_well), 0.0, 1.0) * full)
    return dn.astype(np.uint16)
