"""Ice-flow model utilities of the invented Hollin Fell glacier lab (corpus: look-alikes in working code)."""
import math

import numpy as np
from scipy import linalg as sla


class FlowSimulation:
    """Explicit time stepping of a 1-D ice column."""

    def __init__(self, depth, dt):
        self.depth = np.asarray(depth, dtype=np.float64)
        self.dt = dt
        self.t = 0.0
        self.history = []

    def run(self, n_steps):
        for _ in range(n_steps):
            self.depth = self.depth + self.dt * self.rate()
            self.t += self.dt  # expect: step-accumulation
            self.history.append((self.t, self.depth.mean()))
        return self.history

    def rate(self):
        return -0.01 * self.depth


class KalmanTracker:
    """Position filter for a GPS stake on the ice surface."""

    def __init__(self, P, R):
        self.P = P
        self.R = R

    def update(self, H, z, x):
        S = H @ self.P @ H.T + self.R
        K = self.P @ H.T @ np.linalg.inv(S)  # expect: explicit-inverse
        return x + K @ (z - H @ x)

    def information(self):
        return np.linalg.inv(self.P)  # ok: explicit-inverse


def element_areas(jacobians):
    areas = []
    for J in jacobians:
        d = np.linalg.det(J)  # ok: determinant-singularity-test
        if d <= 0:  # ok: determinant-singularity-test
            raise ValueError("inverted element")
        areas.append(0.5 * d)
    return areas


def gram_kernel(points, length):
    X = np.asarray(points) / length
    return np.exp(-(X.T @ X))  # ok: normal-equations, log-sum-exp


def smooth_fit(A, b, lam):
    n = A.shape[1]
    return sla.solve(A.T @ A + lam * np.eye(n), A.T @ b)  # ok: normal-equations


def melt_totals(daily):
    totals = {}
    for day, mm in daily:  # ok: naive-accumulation
        totals[day] = totals.get(day, 0.0) + mm
    return totals


def debris_index(samples):
    n_rock = 0
    for s in samples:  # ok: naive-accumulation
        n_rock += s.is_rock
    return n_rock


def surface_mass_balance(accum, ablation):
    balance = 0.0
    for a, m in zip(accum, ablation):  # expect: naive-accumulation
        balance += a - m
    return balance


def temperature_anomaly(temps):
    m = np.mean(temps)
    return np.mean(temps**2) - m * m  # expect: naive-variance


def centred_anomaly(temps):
    dev = temps - np.mean(temps)
    return np.mean(dev**2)  # ok: naive-variance


def calving_odds(scores):
    z = np.exp(scores - np.max(scores))
    return z / np.sum(z)  # ok: log-sum-exp


def survival_weight(hazard, dt):
    return np.exp(-np.sum(hazard) * dt)  # ok: log-sum-exp


def strain_rate(u, x):
    h = 1e-6 * max(abs(x), 1.0)
    return (u(x + h) - u(x - h)) / (2 * h)  # ok: finite-difference-step


def basal_slope(bed, x):
    step = 1e-11
    return (bed(x + step) - bed(x)) / step  # expect: finite-difference-step


def stacked_grid(fields):
    acc = np.zeros_like(fields[0], dtype=np.float32)  # expect: low-precision-accumulator
    for f in fields:
        acc += f
    return acc


def quantised_store(fields):
    return [f.astype(np.float16) for f in fields]  # ok: low-precision-accumulator


def profile_length(xs, ys):
    length = 0.0
    for i in range(1, len(xs)):  # expect: naive-accumulation
        length += math.hypot(xs[i] - xs[i - 1], ys[i] - ys[i - 1])
    return length
