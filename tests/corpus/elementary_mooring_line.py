"""Catenary helpers of an invented harbour mooring-line monitor (corpus: root sums)."""
import math

import numpy as np


def sag_parameter(span_ratio):
    return math.log(span_ratio + math.sqrt(span_ratio * span_ratio + 1))  # expect: sqrt-difference


def stable_sag_parameter(span_ratio):
    return math.asinh(span_ratio)  # ok: sqrt-difference


def offset_length(x, slack):
    return x + np.sqrt(x**2 + slack)  # expect: sqrt-difference


def chord(x, y):
    return x + math.sqrt(y * y + 1.0)  # ok: sqrt-difference
