"""Pressure-sensor calibration helpers of an invented instrument lab (corpus: expm1/log1p forms)."""
import math

import numpy as np
from math import exp as e_, log as ln


def relative_gain(rate):
    return math.exp(rate) - 1.0  # expect: exp-minus-one


def charge_fraction(t, tau):
    return 1 - e_(-t / tau)  # expect: exp-minus-one


def vector_gain(rates):
    g = np.exp(rates)
    return g - 1  # expect: exp-minus-one


def stable_gain(rate):
    return math.expm1(rate)


def ratio_of_exps(a, b):
    return math.exp(a) / math.exp(b)


def log_return(r):
    return ln(1 + r)  # expect: log-of-one-plus


def survival_log(p):
    return np.log(1.0 - p)  # expect: log-of-one-plus


def stable_log_return(r):
    return math.log1p(r)


def log_count(samples):
    return math.log(1 + len(samples))  # ok: log-of-one-plus


def shifted_exp(x):
    return math.exp(x) - 2.0  # ok: exp-minus-one


def monthly_yield(rate, months):
    return (1.0 + rate) ** months - 1.0  # expect: exp-minus-one


def whole_growth(count, n):
    return (1 + len(count)) ** n - 1  # ok: exp-minus-one
