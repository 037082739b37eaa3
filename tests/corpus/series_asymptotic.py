"""Far-field tails for the Quillan radio observatory's beam model (invented; corpus: asymptotic series)."""
import math
from math import gamma

import numpy as np
from scipy.special import exp1, factorial


def exponential_tail(x, n=20):
    """E1(x) ~ e^-x / x * sum (-1)^k k! / x^k, summed for a fixed count."""
    s, t = 0.0, 1.0
    for k in range(1, n):  # expect: divergent-series
        s += t
        t *= -k / x
    return math.exp(-x) / x * s


def explicit_tail(x, n=15):
    s = 0.0
    for k in range(n):  # expect: divergent-series
        s += (-1) ** k * math.factorial(k) / x ** (k + 1)
    return s


def sidelobe_erfc(x, n=12):
    s, t = 1.0, 1.0
    for k in range(1, n):  # expect: divergent-series
        t *= -(2 * k - 1) / (2.0 * x * x)
        s += t
    return math.exp(-x * x) / (x * math.sqrt(math.pi)) * s


def gamma_ratio_tail(x, a, n=25):
    s = 0.0
    for k in range(n):  # expect: divergent-series
        s += gamma(k + a) / (gamma(a) * x**k)
    return s


def tolerance_only_tail(x, tol=1e-15):
    s, t, k = 0.0, 1.0, 0
    while abs(t) > tol * abs(s + 1.0):  # expect: divergent-series
        s += t
        k += 1
        t *= -(k + 1) / x
    return s


def vector_tail(x, n=20):
    k = np.arange(n)
    return np.sum(factorial(k) / x**k)  # expect: divergent-series


def packed_tail(x):
    s, t = 0.0, 1.0
    for k in range(1, 30):  # expect: divergent-series
        s, t = s + t, t * k / x
    return s


def hypergeometric_tail(a, b, x, n=18):
    s, t = 0.0, 1.0
    for k in range(n):  # expect: divergent-series
        s += t
        t = t * (a + k) * (b + k) / ((k + 1) * x)
    return s


def short_tail(x):
    s, t = 0.0, 1.0
    for k in range(1, 4):  # expect: divergent-series
        s += t
        t *= -k / x
    return s


def hankel_tail(nu, z, n=16):
    mu = 4.0 * nu * nu
    s, t = 1.0, 1.0
    for k in range(1, n):  # expect: divergent-series
        t *= -(mu - (2 * k - 1) ** 2) * (mu - (2 * k + 1) ** 2) / (k * 64.0 * z * z)
        s += t
    return s


# ---- look-alikes that must stay clean -------------------------------------------------


def truncated_tail(x, n=40):
    s, t = 0.0, 1.0
    for k in range(1, n):  # ok: divergent-series
        s += t
        t_next = t * (-k / x)
        if abs(t_next) > abs(t):
            break
        t = t_next
    return math.exp(-x) / x * s


def previous_term_stop(x, n=40):
    s, prev = 0.0, float("inf")
    for k in range(n):  # ok: divergent-series
        term = (-1) ** k * math.factorial(k) / x ** (k + 1)
        if abs(term) >= abs(prev):
            break
        s += term
        prev = term
    return s


def guarded_tail(x):
    if x < 40.0:
        return exp1(x)
    s, t = 0.0, 1.0
    for k in range(1, 8):  # ok: divergent-series
        s += t
        t *= -k / x
    return math.exp(-x) / x * s


def count_from_argument(x):
    s, t = 0.0, 1.0
    for k in range(1, int(x)):  # ok: divergent-series
        s += t
        t *= -k / x
    return s


def index_stop(x, n=50):
    s, t = 0.0, 1.0
    for k in range(1, n):  # ok: divergent-series
        if k >= x:
            break
        s += t
        t *= -k / x
    return s


def library_tail(x):
    return exp1(x)  # ok: divergent-series


def growth_terms(x):
    s, t = 0.0, 1.0
    for k in range(1, 60):  # ok: divergent-series
        s += t
        t *= x / k
    return s


def continued_fraction_tail(x, tiny=1e-300):
    """Modified Lentz evaluation of E1(x) for small x: convergent, no series."""
    b = x + 1.0
    c = 1.0 / tiny
    d = 1.0 / b
    h = d
    for i in range(1, 200):  # ok: divergent-series
        an = -float(i * i)
        b = x + 1.0 + 2.0 * i
        d = 1.0 / (an * d + b)
        c = b + an / c
        h *= d * c
    return h * math.exp(-x)


def binomial_weights(p, n):
    w, t = 0.0, 1.0
    for k in range(n):  # ok: divergent-series
        w += t
        t *= (n - k) / (k + 1) * p
    return w


#: Stirling-series coefficients B(2k) / (2k (2k - 1)) for the lens-heating log-gamma model
STIRLING = (1 / 12, -1 / 360, 1 / 1260, -1 / 1680, 1 / 1188, -691 / 360360, 1 / 156, -3617 / 122400)
#: Chebyshev coefficients of the feed-horn pattern fit (they shrink: a convergent expansion)
HORN_FIT = (0.91, -0.27, 0.064, -0.011, 0.0016, -0.00021, 0.000024)


def stirling_correction(z):
    s = 0.0
    zp = z
    for c in STIRLING:  # expect: divergent-series
        s += c / zp
        zp *= z * z
    return s


def stirling_correction_stopped(z):
    s, prev = 0.0, float("inf")
    zp = z
    for c in STIRLING:  # ok: divergent-series
        term = c / zp
        if abs(term) > abs(prev):
            break
        s += term
        prev = term
        zp *= z * z
    return s


def horn_pattern(u):
    s, up = 0.0, 1.0
    for c in HORN_FIT:  # ok: divergent-series
        s += c * up
        up *= u
    return s
