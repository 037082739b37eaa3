"""Vectorised kernels of the Tollmere tide-gauge observatory (invented; corpus: array and generator series)."""
import math

import numpy as np
from scipy.special import factorial


def damping_profile(h, n=40):
    k = np.arange(n)
    return np.sum((-1.0) ** k * h**k / factorial(k))  # expect: alternating-series


def sign_array_sine(h, n=25):
    k = np.arange(n)
    signs = (-1.0) ** k
    terms = h ** (2 * k + 1) / factorial(2 * k + 1)
    return np.dot(signs, terms)  # expect: alternating-series


def matmul_cosine(h, n=25):
    k = np.arange(n)
    signs = (-1.0) ** k
    terms = h ** (2 * k) / factorial(2 * k)
    return signs @ terms  # expect: alternating-series


def tidal_phase(h):
    return sum((-1) ** k * h ** (2 * k + 1) / math.factorial(2 * k + 1) for k in range(30))  # expect: alternating-series


def listed_decay(h):
    return sum([(-h) ** k / math.factorial(k) for k in range(50)])  # expect: alternating-series


def where_signs(h, n=30):
    k = np.arange(n)
    sign = np.where(k % 2 == 0, 1.0, -1.0)
    return np.sum(sign * h**k / factorial(k))  # expect: alternating-series


def method_sum(h, n=30):
    k = np.arange(n)
    return ((-1.0) ** k * h ** (2 * k) / factorial(2 * k)).sum()  # expect: alternating-series


def exact_sum_decay(h):
    return math.fsum((-1) ** k * h**k / math.factorial(k) for k in range(60))  # expect: alternating-series


def parity_arith_signs(h, n=30):
    k = np.arange(n)
    sign = 1 - 2 * (k % 2)
    return np.sum(sign * h ** (2 * k + 1) / factorial(2 * k + 1))  # expect: alternating-series


def gauge_twin(h):
    even = sum(h ** (2 * k) / math.factorial(2 * k) for k in range(30))  # expect: alternating-series
    odd = sum(h ** (2 * k + 1) / math.factorial(2 * k + 1) for k in range(30))
    return even - odd


def leibniz_tide(n):
    return 4.0 * sum((-1) ** k / (2 * k + 1.0) for k in range(n))  # expect: alternating-series


# ---- look-alikes that must stay clean -------------------------------------------------


def growth_profile(h, n=40):
    k = np.arange(n)
    return np.sum(h**k / factorial(k))  # ok: alternating-series


def library_profile(h):
    return np.exp(-h)  # ok: alternating-series


def polynomial_fit(coeffs, h):
    return np.polyval(coeffs, -h)  # ok: alternating-series


def weighted_level(weights, levels):
    return np.dot(weights, levels)  # ok: alternating-series


def signed_pairings(n):
    return sum((-1) ** k * math.comb(n, k) for k in range(n + 1))  # ok: alternating-series


def residual_total(residuals):
    return np.sum(residuals)  # ok: alternating-series


def inverted_growth(h):
    s = sum(h**k / math.factorial(k) for k in range(60))  # ok: alternating-series
    return 1.0 / s


def gauge_hyperbolic(h):
    even = sum(h ** (2 * k) / math.factorial(2 * k) for k in range(30))  # ok: alternating-series
    odd = sum(h ** (2 * k + 1) / math.factorial(2 * k + 1) for k in range(30))
    return even + odd
