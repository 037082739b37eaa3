"""Model selection and sensitivities for the invented Marrow Creek bioreactor lab (corpus: log-sum-exp,
finite differences, low-precision accumulation)."""
import math
import sys

import numpy as np
import torch
from numpy import exp as nexp, log as nlog


def evidence(loglik):
    """Log evidence of a batch of culture models."""
    return np.log(np.sum(np.exp(loglik)))  # expect: log-sum-exp


def evidence_method(loglik):
    return np.log(np.exp(loglik).sum())  # expect: log-sum-exp


def evidence_list(scores):
    return math.log(sum(math.exp(s) for s in scores))  # expect: log-sum-exp


def evidence_locals(loglik):
    w = nexp(loglik)
    z = w.sum()
    return nlog(z)  # expect: log-sum-exp


def strain_weights(scores):
    return np.exp(scores) / np.sum(np.exp(scores))  # expect: log-sum-exp


def strain_weights_local(scores):
    e = np.exp(scores)
    return e / e.sum()  # expect: log-sum-exp


def stable_evidence(loglik):
    m = np.max(loglik)
    return m + np.log(np.sum(np.exp(loglik - m)))  # ok: log-sum-exp


def stable_weights(scores):
    e = np.exp(scores - scores.max())
    return e / e.sum()  # ok: log-sum-exp


def log_total_biomass(masses):
    return np.log(np.sum(masses))  # ok: log-sum-exp


def growth_sensitivity(model, mu):
    h = 1e-12
    return (model(mu + h) - model(mu)) / h  # expect: finite-difference-step


def yield_slope(curve, s):
    return (curve(s + 1e-15) - curve(s)) / 1e-15  # expect: finite-difference-step


def uptake_rate(flux, c, step=1e-13):
    base = flux(c)
    return (flux(c + step) - base) / step  # expect: finite-difference-step


def oxygen_gradient(profile, z):
    eps = np.finfo(float).eps
    return (profile(z + eps) - profile(z - eps)) / (2 * eps)  # expect: finite-difference-step


def ph_curvature(titration, v):
    dv = 1e-7
    return (titration(v + dv) - 2 * titration(v) + titration(v - dv)) / dv**2  # expect: finite-difference-step


def coarse_slope(curve, s):
    return (curve(s + 0.05) - curve(s)) / 0.05  # expect: finite-difference-step


def machine_step_slope(curve, s):
    tiny = sys.float_info.epsilon
    return (curve(s + tiny) - curve(s)) / tiny  # expect: finite-difference-step


def good_sensitivity(model, mu):
    h = math.sqrt(np.finfo(float).eps) * max(abs(mu), 1.0)
    h = (mu + h) - mu
    return (model(mu + h) - model(mu)) / h  # ok: finite-difference-step


def central_sensitivity(model, mu):
    h = 6e-6
    return (model(mu + h) - model(mu - h)) / (2 * h)  # ok: finite-difference-step


def forward_sensitivity(model, mu):
    return (model(mu + 1e-8) - model(mu)) / 1e-8  # ok: finite-difference-step


def sampled_gradient(od, dt):
    return (od[1:] - od[:-1]) / dt  # ok: finite-difference-step


def secant(model, a, b):
    return (model(b) - model(a)) / (b - a)  # ok: finite-difference-step


def od_total(readings):
    return np.sum(readings, dtype=np.float32)  # expect: low-precision-accumulator


def od_total_half(readings):
    return readings.astype(np.float16).sum()  # expect: low-precision-accumulator


def cumulative_feed(feed):
    f32 = np.asarray(feed, dtype="float32")
    return np.cumsum(f32)  # expect: low-precision-accumulator


def mean_counts(counts):
    return np.mean(counts.astype(np.float32))  # expect: low-precision-accumulator


def gpu_total(t):
    return t.half().sum()  # expect: low-precision-accumulator


def gpu_total_dtype(t):
    return torch.sum(t, dtype=torch.float16)  # expect: low-precision-accumulator


def integrate_feed(pulses):
    acc = np.zeros(4, dtype=np.float32)  # expect: low-precision-accumulator
    for p in pulses:
        acc += p
    return acc


def integrate_scalar(pulses):
    total = np.float32(0)  # expect: low-precision-accumulator
    for p in pulses:
        total = total + p
    return total


def wide_total(readings):
    return np.sum(readings.astype(np.float32), dtype=np.float64)  # ok: low-precision-accumulator


def store_readings(readings):
    buf = np.zeros(len(readings), dtype=np.float32)  # ok: low-precision-accumulator
    for i, r in enumerate(readings):
        buf[i] = r
    return buf


def peak_reading(readings):
    return readings.astype(np.float32).max()  # ok: low-precision-accumulator


def double_total(readings):
    return np.cumsum(readings, dtype=np.float64)  # ok: low-precision-accumulator


def two_strain_evidence(ll_a, ll_b):
    return np.log(np.exp(ll_a) + np.exp(ll_b))  # expect: log-sum-exp


def two_strain_stable(ll_a, ll_b):
    return np.logaddexp(ll_a, ll_b)  # ok: log-sum-exp
