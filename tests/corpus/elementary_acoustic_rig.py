"""Resonance and damping models of an invented thermo-acoustic test rig (corpus: general cancellation)."""
import math
import time
from datetime import datetime

import numpy as np
from numpy import *  # noqa: F403  (the rig's legacy scripts were written this way)


def beat_amplitude(w, dw, t):
    """Difference of two nearly equal tones sampled at time t."""
    return math.sin((w + dw) * t) - math.sin(w * t)  # expect: subtractive-cancellation


def phase_lag_cosines(phi, dphi):
    return np.cos(phi + dphi) - np.cos(phi)  # expect: subtractive-cancellation


def damping_excess(rate, drate, t):
    return math.exp(-rate * t) - math.exp(-(rate + drate) * t)  # expect: subtractive-cancellation


def log_gain_step(p_out, dp):
    return np.log(p_out + dp) - np.log(p_out)  # expect: subtractive-cancellation


def level_ratio_db(p1, p2):
    return 10 * (math.log10(p1) - math.log10(p2))  # ok: subtractive-cancellation


def antisymmetric_mode(x):
    return exp(x) - exp(-x)  # expect: subtractive-cancellation


def odd_response(x):
    return x - math.sin(x)  # expect: subtractive-cancellation


def saturation_excess(u):
    return np.tanh(u) - u  # expect: subtractive-cancellation


def catenary_sag(x, a):
    return a * (math.cosh(x / a) - 1)  # expect: subtractive-cancellation


def lead_correction(theta):
    return math.tan(theta) - math.sin(theta)  # expect: subtractive-cancellation


def mode_spacing(n):
    return 1.0 / n - 1.0 / (n + 0.5)  # expect: subtractive-cancellation


def compliance_change(stiffness, dk):
    return 1 / stiffness - 1 / (stiffness + dk)  # expect: subtractive-cancellation


def pressure_rise(p0, strain):
    p = p0 * (1.0 + strain)
    return p - p0  # expect: subtractive-cancellation


def thermal_growth(length, alpha, d_temp):
    return (1.0 + alpha * d_temp) * length - length  # expect: subtractive-cancellation


def added_mass(base_mass, shim_mass):
    return (base_mass + shim_mass) - base_mass  # ok: subtractive-cancellation


def interval_bookkeeping(t_start, duration):
    t_stop = t_start + duration
    return t_stop - t_start  # ok: subtractive-cancellation


def stiffness_shift(k):
    shifted = math.exp(k + 1e-6)
    shifted -= math.exp(k)  # expect: subtractive-cancellation
    return shifted


def difference_slope(w, h):
    return (math.sin(w + h) - math.sin(w)) / h  # ok: subtractive-cancellation


def compensated_energy(samples):
    total = 0.0
    carry = 0.0
    for s in samples:
        y = s - carry  # ok: subtractive-cancellation
        t = total + y
        carry = (t - total) - y  # ok: subtractive-cancellation
        total = t
    return total


def representable_step(x, h):
    probe = x + h
    h = probe - x  # ok: subtractive-cancellation
    return h


def settle(x0, f, fp, tol):
    x = x0
    for _ in range(50):
        x_new = x - f(x) / fp(x)
        if abs(x_new - x) < tol:  # ok: subtractive-cancellation
            return x_new
        x = x_new
    return x


def centred(pressures):
    return pressures - np.mean(pressures)  # ok: subtractive-cancellation


def centred_by_hand(pressures, mu):
    mean_p = sum(pressures) / len(pressures)
    return [p - mean_p for p in pressures]  # ok: subtractive-cancellation


def run_seconds(started):
    return time.time() - started  # ok: subtractive-cancellation


def run_days(start: datetime, stop: datetime):
    return (stop - start).days  # ok: subtractive-cancellation


def window_length(frames, first):
    last = len(frames) - 1  # ok: subtractive-cancellation
    return last - first


def sensor_offset(reading_a, reading_b):
    return reading_a - reading_b  # ok: subtractive-cancellation


def fractional_part(x):
    return x - math.floor(x)  # ok: subtractive-cancellation


def half_wave(x):
    return 2 * math.cos((x + 1.0) / 2) * math.sin(0.5)  # ok: subtractive-cancellation


def cos_shift_stable(phi, dphi):
    return -2 * np.sin(phi + dphi / 2) * np.sin(dphi / 2)  # ok: subtractive-cancellation
