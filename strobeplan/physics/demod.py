"""Phase-stepped demodulation of a strobed frame sequence, and what the maps measure.

A pixel seen in N frames taken at wave phases phi_k (the schedule's image phases) records

    I_k = a_0 + sum_m [a_m cos(m phi_k) + b_m sin(m phi_k)] + noise,

with the first harmonic from a knife edge (linear in the deflection) and the second from a
rod stop or a clipped knife. The coefficients are fitted by linear least squares at the
actual phases (unequal steps allowed): the normal equations G c = B^T I with the N x P
design matrix B = [1, cos phi, sin phi, cos 2 phi, ...] (Greivenkamp 1984); G = B^T B is the
same for every pixel, so frames can be accumulated one at a time. The complex harmonic is
Z_m = b_m + i a_m, so that the harmonic is Im[Z_m exp(i m phi)]: its phase is the wave
phase (at that pixel) where the harmonic rises through zero, relative to the view.

Aliasing: with N equal steps, harmonic m is indistinguishable from harmonic j when
m = +-j (mod N), so N steps resolve harmonics up to (N - 1)/2 only (Surrel 1996); for
unequal steps :func:`leakage` gives what a harmonic puts into each fitted one.

Noise: with independent intensity noise sigma_I, the fitted coefficients have covariance
sigma_I^2 G^-1; for equal steps the phase of a harmonic of amplitude A has the standard
deviation sigma_I sqrt(2/N) / A (Brophy 1990; Rathjen 1995 for low SNR).

Every function is pure numpy and broadcasts where its arguments allow.

References
----------
1. J. E. Greivenkamp, "Generalized data reduction for heterodyne interferometry",
   Opt. Eng. 23(4), 350-352 (1984) (least-squares fit at arbitrary phase steps).
2. K. Creath, "Phase-measurement interferometry techniques", Progress in Optics 26,
   349-393 (1988) (phase-stepping algorithms, error sources).
3. C. P. Brophy, "Effect of intensity error correlation on the computed phase of
   phase-shifting interferometry", J. Opt. Soc. Am. A 7(4), 537-541 (1990)
   (phase noise sigma_I sqrt(2/N) / A for uncorrelated noise).
4. C. Rathjen, "Statistical properties of phase-shift algorithms", J. Opt. Soc. Am. A
   12(9), 1997-2008 (1995).
5. Y. Surrel, "Design of algorithms for phase measurements by the use of phase stepping",
   Appl. Opt. 35(1), 51-60 (1996) (harmonics m = +-1 mod N alias onto the fundamental).
6. G. S. Settles, *Schlieren and Shadowgraph Techniques*, Springer (2001), ch. 3 (contrast
   = f2 eps / a) and ch. 10 (quantitative schlieren; a lens of known focal length as the
   calibration object, after Schardin).
"""

from __future__ import annotations

import math

import numpy as np

from . import air as air_model

# --- least squares at the actual phases ----------------------------------------------------


def harmonic_basis(phases, orders=(1, 2)):
    """Design matrix of the harmonic fit at the given phases.

    Parameters
    ----------
    phases : array_like
        Wave phase of each frame. [rad]
    orders : sequence of int
        Harmonic orders fitted besides the mean (1: fundamental). [1]

    Returns
    -------
    ndarray, shape (N, 1 + 2 len(orders))
        Columns 1, cos(m phi), sin(m phi) for each order m. [1]

    References
    ----------
    1. Greivenkamp (1984).
    """
    phi = np.asarray(phases, dtype=float).reshape(-1)
    cols = [np.ones_like(phi)]
    for m in orders:
        cols += [np.cos(m * phi), np.sin(m * phi)]
    return np.stack(cols, axis=1)


def solve_normal_equations(gram, moments, sum_squares, frames):
    """Coefficients and residual variance from accumulated normal equations.

    Parameters
    ----------
    gram : ndarray, shape (P, P)
        B^T B over the frames. [1]
    moments : ndarray, shape (P, ...)
        B^T I per pixel. [grey]
    sum_squares : ndarray, shape (...)
        Sum over frames of I^2 per pixel. [grey^2]
    frames : int
        Number of frames N (N > P for a residual). [1]

    Returns
    -------
    coefficients : ndarray, shape (P, ...)
        a_0, a_1, b_1, a_2, b_2, ... per pixel. [grey]
    variance : ndarray, shape (...)
        Residual variance RSS / (N - P) per pixel (NaN when N = P). [grey^2]

    References
    ----------
    1. Greivenkamp (1984); the residual sum of squares of a linear least-squares fit is
       sum I^2 - c^T B^T I.
    """
    g = np.asarray(gram, dtype=float)
    m = np.asarray(moments, dtype=float)
    p = g.shape[0]
    flat = m.reshape(p, -1)
    coef = np.linalg.solve(g, flat)
    rss = np.asarray(sum_squares, dtype=float).reshape(-1) - np.einsum("ij,ij->j", coef, flat)
    dof = frames - p
    var = np.maximum(rss, 0.0) / dof if dof > 0 else np.full_like(rss, np.nan)
    return coef.reshape(m.shape), var.reshape(m.shape[1:])


def complex_harmonic(coefficients, index):
    """Complex amplitude Z = b + i a of the index-th fitted harmonic (1-based). [grey]

    The harmonic is Im[Z exp(i m phi)] = a cos(m phi) + b sin(m phi).

    Parameters
    ----------
    coefficients : ndarray, shape (P, ...)
        As returned by :func:`solve_normal_equations`. [grey]
    index : int
        Position of the order in the fitted ``orders`` (1 for the first). [1]

    References
    ----------
    1. Creath (1988) (phase = atan2 of the quadrature components).
    """
    c = np.asarray(coefficients)
    return c[2 * index] + 1j * c[2 * index - 1]


def coefficient_sigma(gram, sigma, index):
    """Standard deviation of a harmonic's amplitude from the fit's covariance.

    Parameters
    ----------
    gram : ndarray, shape (P, P)
        B^T B. [1]
    sigma : float or ndarray
        Intensity noise per frame. [grey]
    index : int
        Position of the order among the fitted ones (1-based). [1]

    Returns
    -------
    float or ndarray
        sqrt((var a + var b) / 2): the noise of |Z| (and of the phase, times 1/|Z|). [grey]

    References
    ----------
    1. Brophy (1990); covariance sigma^2 (B^T B)^-1 of a linear least-squares fit.
    """
    inv = np.linalg.inv(np.asarray(gram, dtype=float))
    mean_var = 0.5 * (inv[2 * index - 1, 2 * index - 1] + inv[2 * index, 2 * index])
    return np.asarray(sigma, dtype=float) * math.sqrt(mean_var)


def phase_sigma_equal_steps(sigma, amplitude, steps):
    """Phase noise of an N-step equal-step fit: sigma_I sqrt(2/N) / A. [rad]

    Parameters
    ----------
    sigma : float or ndarray
        Intensity noise per frame. [grey]
    amplitude : float or ndarray
        Amplitude of the harmonic. [grey]
    steps : int or ndarray
        Number of frames N. [1]

    References
    ----------
    1. Brophy (1990), uncorrelated intensity noise; Rathjen (1995).
    """
    s, a, n = np.broadcast_arrays(np.asarray(sigma, float), np.asarray(amplitude, float),
                                  np.asarray(steps, float))
    out = s * np.sqrt(2.0 / n) / a
    return out if out.ndim else float(out)


# --- aliasing ------------------------------------------------------------------------------


def max_resolved_order(steps):
    """Highest harmonic N equal steps resolve without aliasing: floor((N - 1) / 2). [1]

    Parameters
    ----------
    steps : int or ndarray
        Number of phase steps N. [1]

    References
    ----------
    1. Surrel (1996) (sampling theorem for phase stepping).
    """
    n = np.asarray(steps)
    out = (n - 1) // 2
    return out if out.ndim else int(out)


def min_steps(highest_order):
    """Fewest equal phase steps that resolve harmonics up to an order: 2 m + 1. [1]

    Parameters
    ----------
    highest_order : int or ndarray
        Highest harmonic present in the signal. [1]

    References
    ----------
    1. Surrel (1996).
    """
    m = np.asarray(highest_order)
    out = 2 * m + 1
    return out if out.ndim else int(out)


def aliases_onto(order, target, steps):
    """Whether harmonic ``order`` aliases onto harmonic ``target`` with N equal steps.

    True when order = +-target (mod N) and order != target. [1]

    Parameters
    ----------
    order, target : int or ndarray
        Harmonic orders. [1]
    steps : int or ndarray
        Number of equal phase steps N. [1]

    References
    ----------
    1. Surrel (1996).
    """
    m, j, n = (np.asarray(x) for x in (order, target, steps))
    out = (m != j) & (((m - j) % n == 0) | ((m + j) % n == 0))
    return out if out.ndim else bool(out)


def leakage(phases, orders, order):
    """What a harmonic not fitted puts into each fitted harmonic, at any phase steps.

    A harmonic Im[Z_m exp(i m phi)] adds lambda_plus Z_m + lambda_minus conj(Z_m) to the
    fitted Z_j of each order j in ``orders``.

    Parameters
    ----------
    phases : array_like
        Wave phase of each frame. [rad]
    orders : sequence of int
        Fitted orders. [1]
    order : int
        The harmonic present in the data. [1]

    Returns
    -------
    ndarray, shape (len(orders), 2), complex
        (lambda_plus, lambda_minus) per fitted order. [1]

    References
    ----------
    1. Greivenkamp (1984) (the fit is the linear map (B^T B)^-1 B^T); Surrel (1996).
    """
    b = harmonic_basis(phases, orders)
    phi = np.asarray(phases, dtype=float).reshape(-1)
    fit = np.linalg.lstsq(b, np.stack([np.sin(order * phi), np.cos(order * phi)], axis=1),
                          rcond=None)[0]
    out = np.empty((len(orders), 2), dtype=complex)
    for i in range(1, len(orders) + 1):
        z_re = fit[2 * i, 0] + 1j * fit[2 * i - 1, 0]  # data sin: Z_m = 1
        z_im = fit[2 * i, 1] + 1j * fit[2 * i - 1, 1]  # data cos: Z_m = i
        out[i - 1] = ((z_re - 1j * z_im) / 2.0, (z_re + 1j * z_im) / 2.0)
    return out


def highest_significant_order(amplitudes, signal_order=1, fraction=0.02, floor=1e-5):
    """Highest harmonic whose amplitude reaches a fraction of the signal harmonic's.

    An aliased harmonic of relative amplitude r moves the measured phase by up to r rad;
    the default 2 % bounds that at about 1.1 deg (a choice, common practice).

    Parameters
    ----------
    amplitudes : array_like, shape (..., M)
        Amplitudes of orders 1..M. [1]
    signal_order : int
        The harmonic that carries the signal (1 knife, 2 rod). [1]
    fraction : float
        Threshold relative to the signal harmonic. [1]
    floor : float
        Amplitudes below this are ignored (default 1e-5 of the open image: under one grey
        level of a 16-bit camera). [1]

    Returns
    -------
    int or ndarray
        The highest order at or above the threshold (at least ``signal_order``). [1]

    References
    ----------
    1. Surrel (1996) (the phase error of an aliased harmonic is of the order of its
       relative amplitude).
    """
    a = np.abs(np.asarray(amplitudes, dtype=float))
    ref = a[..., signal_order - 1:signal_order]
    orders = np.arange(1, a.shape[-1] + 1)
    big = (a >= fraction * ref) & (a >= floor)
    out = np.max(np.where(big, orders, signal_order), axis=-1)
    out = np.maximum(out, signal_order)
    return out if out.ndim else int(out)


# --- the phase maps ------------------------------------------------------------------------


def phase_gradient(z, step=1):
    """Local phase gradient of a complex map without unwrapping. [rad/pixel]

    arg(z[r, c + s] conj z[r, c]) / s along the columns and the same along the rows, on
    the (rows - s, columns - s) pixels where both exist; the noise falls as 1/s while the
    phase change over s pixels stays below pi.

    Parameters
    ----------
    z : ndarray, shape (rows, columns)
        Complex map. [any]
    step : int
        Baseline s in pixels. [1]

    Returns
    -------
    (d_col, d_row) : ndarray
        Phase change per pixel along the columns and along the rows. [rad/pixel]

    References
    ----------
    1. Creath (1988) (phase differences without unwrapping).
    """
    s = max(1, int(step))
    z = np.asarray(z)
    base = z[:-s, :-s]
    d_col = np.angle(z[:-s, s:] * np.conj(base)) / s
    d_row = np.angle(z[s:, :-s] * np.conj(base)) / s
    return d_col, d_row


def robust_mean(values, clip=4.0, rounds=3):
    """Mean, standard deviation and count after median/MAD outlier rejection.

    Parameters
    ----------
    values : array_like
        Samples (NaN ignored). [any]
    clip : float
        Rejection threshold in robust standard deviations (1.4826 MAD). [1]
    rounds : int
        Rejection passes. [1]

    Returns
    -------
    (mean, std, count) : (float, float, int)

    References
    ----------
    1. P. J. Rousseeuw, C. Croux, "Alternatives to the median absolute deviation",
       J. Am. Stat. Assoc. 88(424), 1273-1283 (1993) (1.4826 MAD estimates sigma).
    """
    x = np.asarray(values, dtype=float).reshape(-1)
    x = x[np.isfinite(x)]
    for _ in range(rounds):
        if x.size < 3:
            break
        med = np.median(x)
        mad = 1.4826 * np.median(np.abs(x - med))
        if mad <= 0:
            break
        keep = np.abs(x - med) <= clip * mad
        if keep.all():
            break
        x = x[keep]
    if x.size == 0:
        return math.nan, math.nan, 0
    return float(x.mean()), float(x.std(ddof=1)) if x.size > 1 else math.nan, int(x.size)


def two_wave_fit(z, x, y, kx, ky, weights=None, constant=False):
    """Fit Z = alpha exp(-i k.r) + beta exp(+i k.r) (a wave and its counter-wave), plus a
    uniform phasor gamma when ``constant`` (what flash-to-flash or frame-to-frame light
    changes leave on a harmonic's map: the same complex number at every pixel).

    Parameters
    ----------
    z : ndarray
        Complex map samples. [any]
    x, y : ndarray
        Sample positions (same shape as z), relative to the reference point. [m]
    kx, ky : float
        Wave vector of the forward wave. [rad/m]
    weights : ndarray, optional
        Weights of the samples. [1]
    constant : bool
        Fit the uniform phasor gamma too (returned last). [1]

    Returns
    -------
    alpha, beta : complex
        Amplitudes of the forward and backward waves at the reference point. [any]
    covariance : ndarray, shape (2, 2)
        Covariance of (alpha, beta) from the residuals. [any^2]
    rms : float
        Root-mean-square residual. [any]
    gamma : complex
        The uniform phasor (only when ``constant``). [any]

    References
    ----------
    1. Linear least squares on a complex basis (e.g. W. H. Press et al., *Numerical
       Recipes*, 3rd ed. (2007), sec. 15.4).
    """
    zz = np.asarray(z).reshape(-1)
    ph = kx * np.asarray(x, float).reshape(-1) + ky * np.asarray(y, float).reshape(-1)
    cols = [np.exp(-1j * ph), np.exp(1j * ph)]
    if constant:
        cols.append(np.ones(ph.shape, dtype=complex))
    a = np.stack(cols, axis=1)
    w = np.ones(zz.shape) if weights is None else np.asarray(weights, float).reshape(-1)
    sw = np.sqrt(w)
    sol, *_ = np.linalg.lstsq(a * sw[:, None], zz * sw, rcond=None)
    resid = zz - a @ sol
    dof = max(1, zz.size - len(cols))
    var = float(np.sum(w * np.abs(resid) ** 2) / np.sum(w) * zz.size / dof)
    aw = a * sw[:, None]
    cov = var * np.linalg.pinv(aw.conj().T @ aw).real[:2, :2]
    if constant:
        return complex(sol[0]), complex(sol[1]), cov, math.sqrt(var), complex(sol[2])
    return complex(sol[0]), complex(sol[1]), cov, math.sqrt(var)


def pressure_phasor_from_gradient(alpha, beta, k_along):
    """Pressure phasor at the reference point from the gradient's two-wave amplitudes.

    For p = Im[P exp(i phi)] with P = A exp(-i k.r) + B exp(+i k.r), the derivative along
    a direction with wave-vector component k_v is -i k_v A exp(-i k.r) + i k_v B exp(i k.r);
    so A = i alpha / k_v, B = -i beta / k_v and P(0) = i (alpha - beta) / k_v.

    Parameters
    ----------
    alpha, beta : complex or ndarray
        Two-wave amplitudes of the measured gradient map. [any]
    k_along : float or ndarray
        Wave-vector component along the gradient's direction (nonzero). [rad/m]

    Returns
    -------
    complex or ndarray
        P(0) in the gradient's units times metres. [any m]

    References
    ----------
    1. Kinsler et al., *Fundamentals of Acoustics*, 4th ed. (2000), ch. 5 (plane and
       standing waves as sums of counter-propagating waves).
    """
    return 1j * (np.asarray(alpha) - np.asarray(beta)) / np.asarray(k_along)


# --- the schlieren chain, inverted ---------------------------------------------------------


def pressure_from_deflection(deflection, passes, path, gladstone_dale, wavenumber, speed):
    """Pressure amplitude of a plane wave from its peak deflection. [Pa]

    Inverts eps = passes L K k p' / c^2 (Settles 2001, with rho' = p'/c^2).

    Parameters
    ----------
    deflection : float or ndarray
        Peak ray deflection eps. [rad]
    passes : float or ndarray
        Passes of the light through the wave. [1]
    path : float or ndarray
        Light path through the sound field L. [m]
    gladstone_dale : float or ndarray
        Gladstone-Dale constant K. [m^3/kg]
    wavenumber : float or ndarray
        Acoustic wavenumber k. [rad/m]
    speed : float or ndarray
        Speed of sound c. [m/s]

    References
    ----------
    1. Settles (2001), ch. 2-3; see strobeplan.physics.schlieren.deflection.
    """
    e, m, length, kk, k, c = np.broadcast_arrays(*(np.asarray(a, float) for a in (
        deflection, passes, path, gladstone_dale, wavenumber, speed)))
    out = e * c**2 / (m * length * kk * k)
    return out if out.ndim else float(out)


def knife_slope(height, cut_fraction, blur, cutoff_distance, background):
    """Contrast per radian of deflection at rest, for a blurred source image. [1/rad]

    d(T/T0)/d eps = f2 T'(0) / T0, from the cutoff's transmission T (the sharp-image
    limit is f2 / a, Settles eq. 3.6).

    Parameters
    ----------
    height : float
        Source image height h. [m]
    cut_fraction : float
        Fraction blocked at rest. [1]
    blur : float
        Gaussian sigma of the image's blur. [m]
    cutoff_distance : float
        f2. [m]
    background : float
        T0, the transmission at rest. [1]

    References
    ----------
    1. Settles (2001), eq. 3.6; strobeplan.physics.cutoff.knife_transmission.
    """
    from . import cutoff

    ds = 1e-4 * height
    t_hi = cutoff.knife_transmission(ds, height, cut_fraction, blur)
    t_lo = cutoff.knife_transmission(-ds, height, cut_fraction, blur)
    return float(cutoff_distance * (t_hi - t_lo) / (2.0 * ds) / background)


def rod_curvature(height, width, blur, cutoff_distance, background):
    """Second-harmonic contrast per radian squared of a rod stop: f2^2 T''(0) / (4 T0).

    T''(0) comes from a quartic least-squares fit of T over +-blur/2 (the erf
    approximation's 1e-7 errors would spoil a three-point difference).

    A deflection eps sin(phi) gives T(f2 eps sin phi) = T0 + T''(0) (f2 eps)^2 (1 -
    cos 2 phi) / 4 + ...: the second harmonic's contrast is this value times eps^2.
    [1/rad^2]

    Parameters
    ----------
    height, width, blur, cutoff_distance, background : float
        Source image height, rod diameter, blur sigma, f2 [m]; T0 [1].

    References
    ----------
    1. Settles (2001), sec. 3.5 (a dark-field stop responds to |eps|).
    """
    from . import cutoff

    scale = blur if blur > 0 else 0.05 * max(height, width)
    s = np.linspace(-0.5, 0.5, 41) * scale
    t = cutoff.rod_transmission(s, height, width, blur)
    second = 2.0 * np.polyfit(s / scale, t, 4)[2] / scale**2  # T''(0) from a quartic fit
    return float(cutoff_distance**2 * second / (4.0 * max(background, 1e-12)))


def lens_deflection(offset, focal_length):
    """Deflection of a ray by a thin lens at a distance from its axis: -r / F. [rad]

    Parameters
    ----------
    offset : float or ndarray
        Signed distance from the lens axis in the cutoff's sensitive direction. [m]
    focal_length : float or ndarray
        Focal length of the calibration lens. [m]

    References
    ----------
    1. Settles (2001), ch. 10 (Schardin's calibration with a weak lens in the test
       region: a known, linear deflection field).
    """
    r, f = np.broadcast_arrays(np.asarray(offset, float), np.asarray(focal_length, float))
    out = -r / f
    return out if out.ndim else float(out)


def lens_sensitivity(contrast_slope, focal_length):
    """Contrast per radian from the slope of a calibration lens's contrast. [1/rad]

    The lens gives eps = -y / F, so a contrast slope dC/dy [1/m] means S = -F dC/dy.

    Parameters
    ----------
    contrast_slope : float or ndarray
        dC/dy across the lens image along the sensitive direction. [1/m]
    focal_length : float or ndarray
        Focal length F. [m]

    References
    ----------
    1. Settles (2001), ch. 10.
    """
    s, f = np.broadcast_arrays(np.asarray(contrast_slope, float),
                               np.asarray(focal_length, float))
    out = -s * f
    return out if out.ndim else float(out)


# --- air from the measured wave -------------------------------------------------------------


def temperature_for_speed(speed, relative_humidity, pressure, co2_fraction=4.0e-4,
                          guess=293.15):
    """Air temperature at which Cramer's speed of sound equals a measured speed. [K]

    Newton's method on strobeplan.physics.air.speed_of_sound (Cramer 1993).

    Parameters
    ----------
    speed : float or ndarray
        Measured speed of sound. [m/s]
    relative_humidity : float or ndarray
        Relative humidity. [1]
    pressure : float or ndarray
        Static pressure. [Pa]
    co2_fraction : float or ndarray
        CO2 mole fraction. [1]
    guess : float
        Starting temperature. [K]

    Returns
    -------
    float or ndarray
        Temperature. [K]

    References
    ----------
    1. O. Cramer, J. Acoust. Soc. Am. 93(5), 2510-2516 (1993).
    """
    c = np.asarray(speed, dtype=float)
    t = np.full(np.broadcast_shapes(c.shape, np.shape(relative_humidity), np.shape(pressure)),
                float(guess))
    for _ in range(30):
        f0 = air_model.speed_of_sound(t, relative_humidity, pressure, co2_fraction) - c
        slope = (air_model.speed_of_sound(t + 0.05, relative_humidity, pressure, co2_fraction)
                 - air_model.speed_of_sound(t - 0.05, relative_humidity, pressure,
                                            co2_fraction)) / 0.1
        step = f0 / slope
        t = np.clip(t - step, 150.0, 450.0)
        if np.all(np.abs(step) < 1e-9):
            break
    return t if t.ndim else float(t)


def speed_slope(temperature, relative_humidity, pressure, co2_fraction=4.0e-4):
    """dc/dT of Cramer's speed of sound (central difference over 0.1 K). [m/(s K)]

    Parameters
    ----------
    temperature, relative_humidity, pressure, co2_fraction : float or ndarray
        As in strobeplan.physics.air.speed_of_sound. [K], [1], [Pa], [1]

    References
    ----------
    1. Cramer (1993).
    """
    hi = air_model.speed_of_sound(np.asarray(temperature) + 0.05, relative_humidity,
                                  pressure, co2_fraction)
    lo = air_model.speed_of_sound(np.asarray(temperature) - 0.05, relative_humidity,
                                  pressure, co2_fraction)
    out = (np.asarray(hi) - np.asarray(lo)) / 0.1
    return out if np.ndim(out) else float(out)
