"""Failure statistics of an invented component reliability lab (corpus: tail probabilities)."""
import math

import numpy as np
import scipy.special as sc
import scipy.stats as st
from scipy import special, stats
from scipy.special import gammainc
from scipy.stats import norm, weibull_min


def exceedance(z):
    """Chance that a normal load exceeds z standard deviations."""
    return 1 - norm.cdf(z)  # expect: complement-of-cdf


def exceedance_scaled(load, mean_load, sd_load):
    return 1.0 - stats.norm.cdf(load, loc=mean_load, scale=sd_load)  # expect: complement-of-cdf


def survival_weibull(hours, shape, scale_h):
    life = weibull_min(shape, scale=scale_h)
    return 1 - life.cdf(hours)  # expect: complement-of-cdf


def survival_gamma(hours, k, theta):
    failed = st.gamma(k, scale=theta).cdf(hours)
    return 1.0 - failed  # expect: complement-of-cdf


def two_sided_p(z):
    return 2 * (1 - st.norm.cdf(abs(z)))  # expect: complement-of-cdf


def upper_incomplete(a, x):
    return 1 - gammainc(a, x)  # expect: complement-of-cdf


def miss_rate(threshold):
    return 1.0 - special.ndtr(threshold)  # expect: complement-of-cdf


def chi_square_tail(dof, statistic):
    return 1.0 - sc.chdtr(dof, statistic)  # expect: complement-of-cdf


def student_tail(dof, t):
    return 1 - sc.stdtr(dof, t)  # expect: complement-of-cdf


def gauss_tail(z):
    return 1 - math.erf(z)  # expect: complement-of-cdf


def phi_upper(z):
    phi = 0.5 * (1.0 + math.erf(z / math.sqrt(2.0)))  # expect: complement-of-cdf
    return 1.0 - phi  # expect: complement-of-cdf


def phi_upper_inline(z):
    return 1.0 - (1.0 + sc.erf(z / np.sqrt(2.0))) / 2  # expect: complement-of-cdf


def exceedance_stable(z):
    return norm.sf(z)  # ok: complement-of-cdf


def miss_rate_stable(threshold):
    return special.ndtr(-threshold)  # ok: complement-of-cdf


def gauss_tail_stable(z):
    return math.erfc(z)  # ok: complement-of-cdf


def density_gap(z):
    return 1 - norm.pdf(z)  # ok: complement-of-cdf


def band_probability(lo, hi):
    return norm.cdf(hi) - norm.cdf(lo)  # ok: complement-of-cdf, subtractive-cancellation


def fitted_survival(model, hours):
    return 1 - model.cdf(hours)  # ok: complement-of-cdf


def unreliability_from_rate(rate_per_h, hours):
    return -np.expm1(-rate_per_h * hours)  # ok: complement-of-cdf


def quantile_gap(p):
    return 1 - norm.ppf(p)  # ok: complement-of-cdf


def burn_in_quality(good_fraction):
    return 1.0 - good_fraction  # ok: complement-of-cdf


def mean_life(scale_h, shape):
    return scale_h * math.gamma(1 + 1 / shape)  # ok: subtractive-cancellation


def lot_deviation(lifetimes):
    return lifetimes - np.mean(lifetimes)  # ok: subtractive-cancellation


def spread_of_two(first_h, second_h):
    return first_h - second_h  # ok: subtractive-cancellation


def inspections_left(schedule, done):
    return len(schedule) - len(done) - 1  # ok: subtractive-cancellation
