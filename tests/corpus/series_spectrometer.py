"""Line-shape and attenuation kernels of the Brannock Ridge spectrometer lab (invented; corpus: series loops)."""
import cmath
import math
from math import comb
from math import factorial as fac


def beam_attenuation(depth, n_terms=60):
    """Transmitted fraction e^-depth through the sample cell."""
    s, t = 0.0, 1.0
    for k in range(1, n_terms):  # expect: alternating-series
        s += t
        t *= -depth / k
    return s


def decay_weight(tau, n=40):
    total = 0.0
    for k in range(n):  # expect: alternating-series
        total += (-1) ** k * tau**k / fac(k)
    return total


def phase_sine(theta):
    acc, term = 0.0, theta
    for k in range(1, 30):  # expect: alternating-series
        acc += term
        term = -term * theta * theta / ((2 * k) * (2 * k + 1))
    return acc


def phase_cosine(theta):
    acc, sign, power, factorial_ = 0.0, 1.0, 1.0, 1.0
    for k in range(25):  # expect: alternating-series
        acc += sign * power / factorial_
        sign = -sign
        power *= theta * theta
        factorial_ *= (2 * k + 1) * (2 * k + 2)
    return acc


def absorbance_until_small(depth, tol=1e-16):
    s, t, k = 0.0, 1.0, 0
    while abs(t) > tol:  # expect: alternating-series
        s += t
        k += 1
        t *= -depth / k
    return s


def parity_kernel(u):
    s = 0.0
    for k in range(40):  # expect: alternating-series
        t = u**k / fac(k)
        if k % 2:
            s -= t
        else:
            s += t
    return s


def packed_update(u):
    s, t = 0.0, 1.0
    for k in range(1, 50):  # expect: alternating-series
        s, t = s + t, -t * u / k
    return s


def pow_sign_kernel(u):
    s = 0.0
    for k in range(35):  # expect: alternating-series
        s += math.pow(-1, k) * u ** (2 * k) / fac(2 * k)
    return s


def detector_log_gain(g):
    """Log-response of the photodiode for a small relative gain g."""
    s = 0.0
    for k in range(1, 60):  # expect: alternating-series
        s += (-g) ** k / k
    return -s


def mirror_angle(r):
    s = 0.0
    for k in range(200):  # expect: alternating-series
        s += (-1) ** k * r ** (2 * k + 1) / (2 * k + 1)
    return s


def complex_response(z):
    s, t = 0j, 1 + 0j
    for k in range(1, 60):  # expect: alternating-series
        s += t
        t *= -z / k
    return s


def toggled_weights(u):
    s, sgn, t = 0.0, 1.0, 1.0
    for k in range(1, 45):  # expect: alternating-series
        s += sgn * t
        sgn *= -1
        t *= u / k
    return s


def parity_sign_kernel(u):
    s = 0.0
    for k in range(30):  # expect: alternating-series
        sign = 1.0 if k % 2 == 0 else -1.0
        s += sign * u ** (2 * k + 1) / fac(2 * k + 1)
    return s


def gaussian_window(w):
    q = -w * w
    s, t = 1.0, 1.0
    for k in range(1, 60):  # expect: alternating-series
        t *= q / k
        s += t
    return s


def bessel_j0(x):
    s, t = 0.0, 1.0
    for k in range(1, 40):  # expect: alternating-series
        s += t
        t *= -(x * x / 4.0) / (k * k)
    return s


def open_ended_decay(depth):
    s, t, k = 0.0, 1.0, 0
    while True:  # expect: alternating-series
        s += t
        k += 1
        t = t * (-depth) / k
        if abs(t) < 1e-17 * abs(s):
            break
    return s


def split_parity(u):
    even = odd = 0.0
    t = 1.0
    for k in range(1, 60):  # expect: alternating-series
        if k % 2:
            even += t
        else:
            odd += t
        t *= u / k
    return even - odd


def two_loop_decay(u):
    evens, t = 0.0, 1.0
    for k in range(0, 60, 2):  # expect: alternating-series
        evens += t
        t *= u * u / ((k + 1) * (k + 2))
    odds, t = 0.0, u
    for k in range(1, 60, 2):
        odds += t
        t *= u * u / ((k + 1) * (k + 2))
    return evens - odds


# ---- look-alikes that must stay clean -------------------------------------------------


def stable_attenuation(depth, n_terms=60):
    s, t = 0.0, 1.0
    for k in range(1, n_terms):  # ok: alternating-series
        s += t
        t *= depth / k
    return 1.0 / s


def library_attenuation(depth):
    return math.exp(-depth)  # ok: alternating-series


def calibration_poly(c, u):
    s = 0.0
    for a in reversed(c):  # ok: alternating-series
        s = s * (-u) + a
    return s


def offsets_total(gain, offset, drift):
    s = 0.0
    for v in (gain, -offset, drift):  # ok: alternating-series
        s += v
    return s


def surjections(n, m):
    return sum((-1) ** k * comb(m, k) * (m - k) ** n for k in range(m + 1))  # ok: alternating-series


def inclusion_exclusion(n):
    total, sign = 0, 1
    for k in range(n + 1):  # ok: alternating-series
        total += sign * comb(n, k)
        sign = -sign
    return total


def growth_series(u):
    s, t = 0.0, 1.0
    for k in range(1, 60):  # ok: alternating-series
        s += t
        t *= u / k
    return s


def hyperbolic_pair(u):
    even = odd = 0.0
    t = 1.0
    for k in range(1, 60):  # ok: alternating-series
        if k % 2:
            even += t
        else:
            odd += t
        t *= u / k
    return even + odd


def paired_differences(samples):
    d = 0.0
    for k in range(8):  # ok: alternating-series
        d += samples[2 * k] - samples[2 * k + 1]
    return d


def clenshaw(c, x):
    b1 = b2 = 0.0
    for a in reversed(c[1:]):  # ok: alternating-series
        b1, b2 = 2.0 * x * b1 - b2 + a, b1
    return x * b1 - b2 + c[0]


def complex_library(z):
    return cmath.exp(-z)  # ok: alternating-series
