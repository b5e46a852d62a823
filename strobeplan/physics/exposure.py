"""Optical pulse of a strobed LED, its temporal MTF (contrast retention) and motion blur.

Pulse model (used by every function here)
-----------------------------------------
The gate opens at t = 0 and closes at t = ``width`` (the gate-on time). The LED current,
normalised to its full-scale value 1, slews at constant rates: it rises at 1/``rise`` per
second from t = 0 and, from t = ``width``, falls at 1/``fall`` per second until it reaches 0.

* ``width >= rise``: a trapezoid - ramp 0 -> 1 over [0, rise], hold 1, ramp 1 -> 0 over
  [width, width + fall]. Its area is ``width + (fall - rise) / 2``.
* ``width < rise``: the ramp is cut short at height a = width / rise and then falls at the
  same slew, over a * fall: a triangle of area a (width + a fall) / 2.

``rise = 0`` or ``fall = 0`` give ideal steps. The optical output is that current convolved
with the LED's impulse response

    h(t) = (1 - w) delta(t) + (w / tau) exp(-t / tau),

a fast (electroluminescent) part and a phosphor part holding the fraction w of the light
with a single-exponential decay tau (tau = 0 makes the phosphor part fast too).

The temporal MTF of a flash on a pattern that varies at frequency f is |P(f)| / P(0), P the
Fourier transform of the optical pulse; Gaussian timing jitter sigma multiplies it by
exp(-2 pi^2 f^2 sigma^2), and independent effects multiply.

Every function is vectorised: all arguments broadcast against each other as numpy arrays.

References
----------
1. G. D. Boreman, *Modulation Transfer Function in Optical and Electro-Optical Systems*,
   SPIE Press (2001) (MTF of a rectangular exposure: |sinc|). doi:10.1117/3.419857
2. R. N. Bracewell, *The Fourier Transform and Its Applications*, 3rd ed., McGraw-Hill
   (2000): shift, convolution and moment theorems; transforms of the rectangle, ramp and
   one-sided exponential.
3. Gaussian jitter exp(-2 pi^2 f^2 sigma^2) is the characteristic function of a normal
   distribution (A. Papoulis, S. U. Pillai, *Probability, Random Variables and Stochastic
   Processes*, 4th ed., McGraw-Hill, 2002); as a jitter MTF it is quoted from B. Johnson,
   Appl. Opt. 32(32), 6503 (1993).
"""

from __future__ import annotations

import numpy as np

_TAYLOR_LIMIT = 1e-2  # below |x| = 0.01 the ramp transform uses its Taylor series
_SAMPLES_PULSE = 1500  # samples over the current pulse for the sampled durations
_SAMPLES_TAIL = 1500  # samples over the phosphor tail
_TAIL_DECAYS = 14.0  # tail sampled to 14 tau (e^-14 = 8e-7 of the light left)
_CHUNK = 256  # rows per chunk for the sampled evaluations (bounds memory)


def _arrays(*args):
    return np.broadcast_arrays(*[np.asarray(a, dtype=float) for a in args])


def _out(x):
    return x if np.ndim(x) else x.item()


def _edges(width, rise, fall):
    """Realised ramp durations and peak of the slew-limited current.

    Returns (peak a, realised rise duration, realised fall duration, area). [1], [s], [s],
    [s]
    """
    a = np.where(rise > 0, np.minimum(width / np.where(rise > 0, rise, 1.0), 1.0), 1.0)
    a = np.where(width > 0, a, 0.0)
    t_rise = np.minimum(width, rise)
    t_fall = a * fall
    area = a * (0.5 * t_rise + (width - t_rise) + 0.5 * t_fall)
    return a, t_rise, t_fall, area


def _box(x):
    """Integral of exp(-j x u) over u in [0, 1]. [1]"""
    return np.exp(-0.5j * x) * np.sinc(x / (2.0 * np.pi))


def _ramp(x):
    """Integral of u exp(-j x u) over u in [0, 1], stable near x = 0. [1]"""
    small = np.abs(x) < _TAYLOR_LIMIT
    xs = np.where(small, 1.0, x)
    closed = (np.exp(-1j * xs) * (1.0 + 1j * xs) - 1.0) / xs**2
    series = 0.5 - 1j * x / 3.0 - x**2 / 8.0 + 1j * x**3 / 30.0 + x**4 / 144.0
    return np.where(small, series, closed)


def current_spectrum(frequency, width, rise, fall):
    """Fourier transform of the slew-limited LED current (not normalised).

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    width : float or ndarray
        Gate-on time (the fall starts at t = width). [s]
    rise : float or ndarray
        Time for the current to ramp 0 -> 1 (full scale). [s]
    fall : float or ndarray
        Time for the current to ramp 1 -> 0. [s]

    Returns
    -------
    complex or ndarray
        I(f) = integral of i(t) exp(-j 2 pi f t) dt, i normalised to full scale 1; I(0) is
        the area. [s]

    References
    ----------
    1. Bracewell (2000): the pulse is split into a rising ramp, a plateau and a
       falling ramp, each transformed in closed form and shifted.
    """
    f, width, rise, fall = _arrays(frequency, width, rise, fall)
    a, t_rise, t_fall, _ = _edges(width, rise, fall)
    omega = 2.0 * np.pi * f
    hold = width - t_rise
    up = t_rise * _ramp(omega * t_rise)
    plateau = hold * _box(omega * hold) * np.exp(-1j * omega * t_rise)
    down = t_fall * (_box(omega * t_fall) - _ramp(omega * t_fall)) * np.exp(-1j * omega * width)
    return _out(a * (up + plateau + down))


def led_response(frequency, phosphor_fraction, phosphor_decay):
    """Frequency response of the LED light output to its current, normalised to 1 at DC.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    phosphor_fraction : float or ndarray
        Fraction w of the light emitted by the slow (phosphor) part, 0..1. [1]
    phosphor_decay : float or ndarray
        Single-exponential decay time tau of the phosphor part. [s]

    Returns
    -------
    complex or ndarray
        (1 - w) + w / (1 + j 2 pi f tau). [1]

    References
    ----------
    1. Bracewell (2000): transform of the one-sided exponential.
    """
    f, w, tau = _arrays(frequency, phosphor_fraction, phosphor_decay)
    return _out((1.0 - w) + w / (1.0 + 2j * np.pi * f * tau))


def pulse_spectrum(frequency, width, rise, fall, phosphor_fraction, phosphor_decay):
    """Fourier transform of the optical pulse, normalised to H(0) = 1.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    width : float or ndarray
        Gate-on time. [s]
    rise : float or ndarray
        Current ramp-up time 0 -> full scale. [s]
    fall : float or ndarray
        Current ramp-down time full scale -> 0. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]

    Returns
    -------
    complex or ndarray
        H(f) / H(0); the phase is measured from the gate-open edge. A zero-width pulse
        returns its limit, the LED response alone. [1]

    References
    ----------
    1. Bracewell (2000) (convolution theorem).
    2. Boreman (2001).
    """
    f, width, rise, fall, w, tau = _arrays(
        frequency, width, rise, fall, phosphor_fraction, phosphor_decay
    )
    _, _, _, area = _edges(width, rise, fall)
    current = np.asarray(current_spectrum(f, width, rise, fall))
    safe = np.where(area > 0, area, 1.0)
    # Real and imaginary parts separately: numpy's complex division overflows for
    # subnormal areas.
    normalised = np.where(area > 0, current.real / safe + 1j * (current.imag / safe), 1.0 + 0j)
    return _out(normalised * np.asarray(led_response(f, w, tau)))


def jitter_factor(frequency, sigma):
    """Contrast kept under Gaussian timing jitter.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency of the pattern. [Hz]
    sigma : float or ndarray
        RMS timing jitter (independent sources add in quadrature). [s]

    Returns
    -------
    float or ndarray
        exp(-2 pi^2 f^2 sigma^2). [1]

    References
    ----------
    1. Papoulis & Pillai (2002): characteristic function of a normal distribution.
    """
    f, s = _arrays(frequency, sigma)
    return _out(np.exp(-2.0 * np.pi**2 * f**2 * s**2))


def combined_jitter(*sigmas):
    """RMS sum of independent timing jitters (e.g. controller and gate driver).

    Parameters
    ----------
    *sigmas : float or ndarray
        RMS jitters of independent sources. [s]

    Returns
    -------
    float or ndarray
        sqrt(sum sigma_i^2). [s]

    References
    ----------
    1. Papoulis & Pillai (2002): variances of independent random variables add.
    """
    total = sum(np.asarray(s, dtype=float) ** 2 for s in sigmas)
    return _out(np.sqrt(np.asarray(total, dtype=float)))


def retention(
    frequency,
    width,
    rise,
    fall,
    phosphor_fraction,
    phosphor_decay,
    jitter_rms=0.0,
    smear=1.0,
):
    """Contrast retention of the strobed image of a pattern varying at `frequency`.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency of the wave (or one of its harmonics). [Hz]
    width : float or ndarray
        Gate-on time. [s]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]
    jitter_rms : float or ndarray, optional
        Combined RMS timing jitter. [s]
    smear : float or ndarray, optional
        Contrast factor from slow-motion phase advance or clock drift within one exposure,
        computed by the timing core. [1]

    Returns
    -------
    float or ndarray
        |H(f)| / H(0) * exp(-2 pi^2 f^2 sigma^2) * smear, 0..1. [1]

    References
    ----------
    1. Boreman (2001) (temporal MTF, cascaded MTFs multiply).
    2. Papoulis & Pillai (2002) (jitter).
    """
    spectrum = pulse_spectrum(frequency, width, rise, fall, phosphor_fraction, phosphor_decay)
    return _out(
        np.abs(spectrum)
        * np.asarray(jitter_factor(frequency, jitter_rms))
        * np.asarray(smear, dtype=float)
    )


def phase_delay(frequency, width, rise, fall, phosphor_fraction, phosphor_decay):
    """Delay of the optical pulse as seen by a wave at `frequency`: -arg H(f) / (2 pi f).

    For a symmetric pulse this is its centre; for an asymmetric one (phosphor tail, unequal
    edges) it differs slightly from the centroid, to which it tends as f -> 0.

    Parameters
    ----------
    frequency : float or ndarray
        Wave frequency (> 0). [Hz]
    width : float or ndarray
        Gate-on time. [s]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]

    Returns
    -------
    float or ndarray
        Phase delay after the gate-open edge (principal value of the phase). [s]

    References
    ----------
    1. Bracewell (2000) (shift theorem).
    """
    spectrum = np.asarray(
        pulse_spectrum(frequency, width, rise, fall, phosphor_fraction, phosphor_decay)
    )
    f = np.asarray(frequency, dtype=float)
    return _out(-np.angle(spectrum) / (2.0 * np.pi * f))


def optical_area(width, rise, fall, phosphor_fraction=0.0, phosphor_decay=0.0):
    """Integral of the optical pulse for a full-scale current of 1: relative light per flash.

    The LED response has unit area, so this equals the current's area.

    Parameters
    ----------
    width : float or ndarray
        Gate-on time. [s]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray, optional
        Fraction of the light in the phosphor part (does not change the area). [1]
    phosphor_decay : float or ndarray, optional
        Phosphor decay time (does not change the area). [s]

    Returns
    -------
    float or ndarray
        width + (fall - rise) / 2 when width >= rise; a (width + a fall) / 2 with
        a = width / rise otherwise. [s]

    References
    ----------
    1. Bracewell (2000): the area of a convolution is the product of the areas.
    """
    width, rise, fall, _, _ = _arrays(width, rise, fall, phosphor_fraction, phosphor_decay)
    return _out(_edges(width, rise, fall)[3])


def optical_centroid(width, rise, fall, phosphor_fraction, phosphor_decay):
    """Delay of the optical pulse's centroid after the start of the current (gate edge).

    Parameters
    ----------
    width : float or ndarray
        Gate-on time. [s]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]

    Returns
    -------
    float or ndarray
        First moment of the optical pulse divided by its area: the current's centroid
        plus w tau (centroids of convolved pulses add). nan for a zero-width pulse. [s]

    References
    ----------
    1. Bracewell (2000) (first moments: the centroid of a convolution is the sum
       of the centroids).
    """
    width, rise, fall, w, tau = _arrays(width, rise, fall, phosphor_fraction, phosphor_decay)
    a, t_rise, t_fall, area = _edges(width, rise, fall)
    moment = a * (
        t_rise**2 / 3.0
        + 0.5 * (width**2 - t_rise**2)
        + 0.5 * t_fall * (width + t_fall / 3.0)
    )
    with np.errstate(invalid="ignore", divide="ignore"):
        centroid = np.where(area > 0, moment / np.where(area > 0, area, 1.0), np.nan)
    return _out(centroid + w * tau)


def _ramp_step(x, duration):
    """Unit ramp of the given duration at times x; a step (1/2 at x = 0) when duration = 0.

    The step takes the mean of its limits at the jump, the Fourier-series convention, so
    that sampled integrals and half-maximum crossings land on the jump itself. [1]
    """
    safe = np.where(duration > 0, duration, 1.0)
    return np.where(duration > 0, np.clip(x / safe, 0.0, 1.0), np.heaviside(x, 0.5))


def _ramp_step_filtered(x, duration, tau):
    """`_ramp_step` passed through the normalised exponential (1/tau) exp(-t/tau). [1]"""
    tau_safe = np.where(tau > 0, tau, 1.0)

    def q(y):  # response to a unit-slope ramp starting at 0
        r = np.maximum(y, 0.0)
        return r - tau_safe * (-np.expm1(-r / tau_safe))

    long_edge = duration > 1e-9 * tau_safe
    d_safe = np.where(long_edge, duration, 1.0)
    ramp = (q(x) - q(x - d_safe)) / d_safe
    step = -np.expm1(-np.maximum(x, 0.0) / tau_safe)
    filtered = np.where(long_edge, ramp, step)
    return np.where(tau > 0, filtered, _ramp_step(x, duration))


def optical_pulse(t, width, rise, fall, phosphor_fraction, phosphor_decay):
    """Optical power of the pulse at times t after the gate edge, full-scale current 1.

    Parameters
    ----------
    t : float or ndarray
        Time after the gate-open edge. [s]
    width : float or ndarray
        Gate-on time. [s]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]

    Returns
    -------
    float or ndarray
        Relative optical power (1 = steady output at full-scale current); at an ideal
        step (rise or fall = 0) the value at the jump is the mean of its two limits. [1]

    References
    ----------
    1. Bracewell (2000): the current is a sum of ramps, each convolved with h(t)
       in closed form.
    """
    t, width, rise, fall, w, tau = _arrays(t, width, rise, fall, phosphor_fraction, phosphor_decay)
    a, t_rise, t_fall, _ = _edges(width, rise, fall)
    fast = _ramp_step(t, t_rise) - _ramp_step(t - width, t_fall)
    slow = _ramp_step_filtered(t, t_rise, tau) - _ramp_step_filtered(t - width, t_fall, tau)
    return _out(a * ((1.0 - w) * fast + w * slow))


def _sampled(width, rise, fall, phosphor_fraction, phosphor_decay):
    """Sample the optical pulse on a two-part grid; rows are the flattened candidates.

    Returns (times, trapezoid weights, samples), each of shape (n, samples).
    """
    a, t_rise, t_fall, _ = _edges(width, rise, fall)
    end = (width + t_fall)[:, None]
    u = np.linspace(0.0, 1.0, _SAMPLES_PULSE)[None, :]
    v = np.linspace(0.0, _TAIL_DECAYS, _SAMPLES_TAIL)[None, 1:]
    tail = np.where(phosphor_fraction > 0, phosphor_decay, 0.0)[:, None]
    t = np.concatenate([end * u, end + tail * v], axis=1)
    dt = np.diff(t, axis=1)
    weights = np.zeros_like(t)
    weights[:, 1:] += 0.5 * dt
    weights[:, :-1] += 0.5 * dt
    p = optical_pulse(
        t, width[:, None], rise[:, None], fall[:, None],
        phosphor_fraction[:, None], phosphor_decay[:, None],
    )
    return t, weights, np.asarray(p)


def _chunked(fn, *args):
    arrays = _arrays(*args)
    shape = arrays[0].shape
    flat = [x.ravel() for x in arrays]
    n = flat[0].size
    out = np.empty(n)
    for start in range(0, n, _CHUNK):
        part = [x[start:start + _CHUNK] for x in flat]
        out[start:start + _CHUNK] = fn(*part)
    return _out(out.reshape(shape))


def _fwhm_rows(width, rise, fall, w, tau):
    t, _, p = _sampled(width, rise, fall, w, tau)
    half = 0.5 * p.max(axis=1, keepdims=True)
    above = p >= half
    rows = np.arange(p.shape[0])
    i0 = np.argmax(above, axis=1)  # first sample at or above half
    i1 = p.shape[1] - 1 - np.argmax(above[:, ::-1], axis=1)  # last one

    def cross(i_out, i_in):
        p_out, p_in = p[rows, i_out], p[rows, i_in]
        t_out, t_in = t[rows, i_out], t[rows, i_in]
        frac = (half[:, 0] - p_out) / np.where(p_in != p_out, p_in - p_out, 1.0)
        return t_out + frac * (t_in - t_out)

    start = np.where(i0 > 0, cross(np.maximum(i0 - 1, 0), i0), t[rows, i0])
    last = p.shape[1] - 1
    stop = np.where(i1 < last, cross(np.minimum(i1 + 1, last), i1), t[rows, i1])
    return np.where(width > 0, stop - start, np.nan)


def fwhm(width, rise, fall, phosphor_fraction, phosphor_decay):
    """Full width at half maximum of the optical pulse (sampled evaluation).

    The pulse is sampled at 1500 points over the current pulse and 1500 over 14 phosphor
    decay times; the half-maximum crossings are interpolated linearly.

    Parameters
    ----------
    width : float or ndarray
        Gate-on time. [s]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]

    Returns
    -------
    float or ndarray
        Time between the first and last crossing of half the peak power; for a trapezoid
        without phosphor it is width + (fall - rise) / 2. nan for zero width. [s]

    References
    ----------
    1. ISO 11554:2017, pulse duration as the full width at half the peak power.
    """
    return _chunked(_fwhm_rows, width, rise, fall, phosphor_fraction, phosphor_decay)


def _energy_rows(width, rise, fall, w, tau, fraction):
    _, weights, p = _sampled(width, rise, fall, w, tau)
    order = np.argsort(-p, axis=1)  # brightest samples first: the level set {p >= level}
    p_sorted = np.take_along_axis(p, order, axis=1)
    w_sorted = np.take_along_axis(weights, order, axis=1)
    energy = np.cumsum(p_sorted * w_sorted, axis=1)
    time = np.cumsum(w_sorted, axis=1)
    target = fraction[:, None] * energy[:, -1:]
    k = np.argmax(energy >= target, axis=1)
    rows = np.arange(p.shape[0])
    e_prev = np.where(k > 0, energy[rows, np.maximum(k - 1, 0)], 0.0)
    t_prev = np.where(k > 0, time[rows, np.maximum(k - 1, 0)], 0.0)
    step_e = energy[rows, k] - e_prev
    frac = (target[:, 0] - e_prev) / np.where(step_e > 0, step_e, 1.0)
    duration = t_prev + frac * (time[rows, k] - t_prev)
    return np.where(width > 0, duration, np.nan)


def energy_duration(width, rise, fall, phosphor_fraction, phosphor_decay, fraction=0.9):
    """Shortest time that holds `fraction` of the pulse's light (sampled evaluation).

    The pulse is unimodal, so the shortest such interval is the level set {p >= level}
    that holds the fraction; it is found by sorting the samples by power.

    Parameters
    ----------
    width : float or ndarray
        Gate-on time. [s]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]
    fraction : float or ndarray, optional
        Fraction of the energy to hold, default 0.9. [1]

    Returns
    -------
    float or ndarray
        Duration; 0.9 width for a rectangle. nan for zero width. [s]

    References
    ----------
    1. Shortest-coverage interval of a unimodal density: the highest-density region,
       R. J. Hyndman, "Computing and graphing highest density regions", Am. Stat. 50(2),
       120-126 (1996). doi:10.1080/00031305.1996.10474359
    """
    return _chunked(_energy_rows, width, rise, fall, phosphor_fraction, phosphor_decay, fraction)


def max_pulse_width(
    frequency,
    target,
    rise,
    fall,
    phosphor_fraction,
    phosphor_decay,
    jitter_rms=0.0,
    smear=1.0,
    iterations=60,
):
    """Widest gate-on time whose retention at `frequency` still meets `target`.

    Jitter, smear and the LED response do not depend on the width, so the current's
    normalised spectrum must reach target / (|LED| * jitter * smear). Retention falls with
    width over the first lobe; a vectorised bisection over [0, w_hi] finds the crossing,
    w_hi the width whose current area is 1/f (the first zero of an ideal rectangle).

    Parameters
    ----------
    frequency : float or ndarray
        Highest frequency that must be frozen (wave or harmonic). [Hz]
    target : float or ndarray
        Minimum retention, 0..1. [1]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]
    jitter_rms : float or ndarray, optional
        Combined RMS timing jitter. [s]
    smear : float or ndarray, optional
        Contrast factor from slow motion or drift. [1]
    iterations : int, optional
        Bisection steps (60 halve the bracket below 1e-18 of itself). [1]

    Returns
    -------
    float or ndarray
        Widest gate-on time meeting the target; nan when even a vanishingly short pulse
        misses it; w_hi when the whole first lobe meets it. [s]

    References
    ----------
    1. Boreman (2001); bisection: W. H. Press et al., *Numerical Recipes*, 3rd ed.
       (2007), sect. 9.1.
    """
    f, target, rise, fall, w, tau, sigma, smear = _arrays(
        frequency, target, rise, fall, phosphor_fraction, phosphor_decay, jitter_rms, smear
    )
    other = (
        np.abs(np.asarray(led_response(f, w, tau)))
        * np.asarray(jitter_factor(f, sigma))
        * smear
    )
    needed = target / np.where(other > 0, other, 1.0)
    reachable = (other > 0) & (needed <= 1.0)
    hi = np.maximum(1.0 / f - 0.5 * (fall - rise), rise)
    lo = np.zeros_like(hi)

    def current_retention(width):
        return np.abs(np.asarray(pulse_spectrum(f, width, rise, fall, 0.0, 0.0)))

    whole_lobe = current_retention(hi) >= needed
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        ok = current_retention(mid) >= needed
        lo = np.where(ok, mid, lo)
        hi = np.where(ok, hi, mid)
    result = np.where(whole_lobe, hi, lo)
    return _out(np.where(reachable, result, np.nan))


def blur_distance(speed, duration):
    """Distance a travelling wave moves during the flash.

    Parameters
    ----------
    speed : float or ndarray
        Wave (phase) speed. [m/s]
    duration : float or ndarray
        Optical duration of the flash. [s]

    Returns
    -------
    float or ndarray
        speed * duration. [m]

    References
    ----------
    1. Boreman (2001) (motion MTF: displacement during the exposure).
    """
    speed, duration = _arrays(speed, duration)
    return _out(speed * duration)


def blur_pixels(blur, object_pixel):
    """Blur expressed in camera pixels at the object.

    Parameters
    ----------
    blur : float or ndarray
        Blur distance at the object. [m]
    object_pixel : float or ndarray
        Size of one camera pixel projected onto the object. [m]

    Returns
    -------
    float or ndarray
        blur / object_pixel. [1]

    References
    ----------
    1. Boreman (2001).
    """
    blur, pixel = _arrays(blur, object_pixel)
    return _out(blur / pixel)


def wavelength(speed, frequency):
    """Acoustic wavelength.

    Parameters
    ----------
    speed : float or ndarray
        Speed of sound. [m/s]
    frequency : float or ndarray
        Frequency. [Hz]

    Returns
    -------
    float or ndarray
        speed / frequency. [m]

    References
    ----------
    1. L. E. Kinsler et al., *Fundamentals of Acoustics*, 4th ed., Wiley (2000).
    """
    speed, f = _arrays(speed, frequency)
    return _out(speed / f)


LN9 = float(np.log(9.0))  # 10-90 % rise of a single pole is ln(9) time constants


def led_rise_response(frequency, rise_time):
    """The LED's own optical rise as a single pole: 1 / (1 + j 2 pi f tau), tau = t_r / ln 9.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    rise_time : float or ndarray
        10-90 % optical rise time of the LED at a current step (0: instantaneous). [s]

    Returns
    -------
    complex or ndarray
        Response normalised to 1 at DC. [1]

    References
    ----------
    1. A single-pole step response 1 - exp(-t/tau) goes from 10 % to 90 % in tau ln 9
       (Bracewell 2000, the one-sided exponential; the 10-90 % definition is common
       practice on LED datasheets).
    """
    f, tr = _arrays(frequency, rise_time)
    return _out(1.0 / (1.0 + 2j * np.pi * f * tr / LN9))


def light_spectrum(frequency, width, rise, fall, phosphor_fraction, phosphor_decay,
                   led_rise=0.0, delay=0.0):
    """Spectrum of the light pulse as seen from the timer edge, normalised to 1 at DC.

    The current flows ``delay`` after the timer edge (driver propagation plus the gate's
    turn-on delay) for ``width`` (the gate-on time plus the turn-off minus the turn-on
    delay), with its switching edges; the LED adds its rise (a pole) and phosphor tail.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    width : float or ndarray
        Duration of the current from its start to the start of its fall. [s]
    rise : float or ndarray
        Current ramp-up time. [s]
    fall : float or ndarray
        Current ramp-down time. [s]
    phosphor_fraction : float or ndarray
        Fraction of the light in the phosphor part. [1]
    phosphor_decay : float or ndarray
        Phosphor decay time. [s]
    led_rise : float or ndarray, optional
        LED 10-90 % optical rise time. [s]
    delay : float or ndarray, optional
        Timer edge to the start of the current. [s]

    Returns
    -------
    complex or ndarray
        H(f) / H(0), phase measured from the timer edge. [1]

    References
    ----------
    1. Bracewell (2000) (convolution and shift theorems).
    """
    f, d = _arrays(frequency, delay)
    spectrum = np.asarray(pulse_spectrum(f, width, rise, fall, phosphor_fraction,
                                         phosphor_decay))
    out = spectrum * np.asarray(led_rise_response(f, led_rise)) * np.exp(-2j * np.pi * f * d)
    return _out(out)


def fundamental_delay(frequency, width, rise, fall, phosphor_fraction, phosphor_decay,
                      led_rise=0.0, delay=0.0):
    """When the image sees the wave: the light pulse's phase delay at the wave frequency.

    An image integrates the wave p(t) = Re(P e^{j w t}) under the light L(t - t_e) of a
    flash whose timer edge is at t_e; the result is Re(P conj(H(f)) e^{j w t_e}) with H the
    light's spectrum, i.e. the wave at the instant t_e - arg H(f) / w, times |H|. That
    phase delay, not the light's centroid, is where the flash must be placed. It is
    returned on the branch nearest the centroid (both agree as f -> 0).

    Parameters
    ----------
    frequency : float or ndarray
        Wave frequency (> 0). [Hz]
    width, rise, fall, phosphor_fraction, phosphor_decay, led_rise, delay
        As in `light_spectrum`. [s], [s], [s], [1], [s], [s], [s]

    Returns
    -------
    float or ndarray
        -arg H(f) / (2 pi f) after the timer edge. [s]

    References
    ----------
    1. Bracewell (2000) (shift and moment theorems).
    """
    f, width, rise, fall, w, tau, tr, d = _arrays(frequency, width, rise, fall,
                                                  phosphor_fraction, phosphor_decay,
                                                  led_rise, delay)
    w_eff = np.where(tau > 0, w, 0.0)
    centroid = np.asarray(optical_centroid(width, rise, fall, w_eff, tau)) + tr / LN9 + d
    h = np.asarray(light_spectrum(f, width, rise, fall, w_eff, tau, tr, d))
    period = 1.0 / f
    raw = -np.angle(h) / (2.0 * np.pi * f)
    return _out(raw + period * np.round((centroid - raw) / period))
