"""Flight-log reduction for the invented Greywater high-altitude balloon programme (corpus: mixed spellings)."""
from numpy import *
import scipy.special as sps
from scipy import linalg


def ascent_rate_spread(rates):
    return mean(rates**2) - mean(rates)**2  # expect: naive-variance


def log_partition(levels):
    return log(sum(exp(levels)))  # expect: log-sum-exp


def stable_partition(levels):
    return sps.logsumexp(levels)  # ok: log-sum-exp


def layer_weights(levels):
    z = exp(levels)
    return z / sum(z)  # expect: log-sum-exp


def shifted_weights(levels):
    z = exp(levels - max(levels))
    return z / z.sum()  # ok: log-sum-exp


def drift_solution(M, wind):
    return linalg.inv(M) @ wind  # expect: explicit-inverse


def drift_fit(B, alt):
    return linalg.solve(B.T @ B, B.T @ alt)  # expect: normal-equations


def ballast_singular(S):
    return linalg.det(S) == 0.0  # expect: determinant-singularity-test


def integrate_pressure(levels, dz):
    column = 0.0
    for p in levels:  # expect: naive-accumulation
        column += p * dz
    return column


def path_length(fixes):
    dist = 0.0
    for a, b in zip(fixes, fixes[1:]):  # expect: naive-accumulation
        dist += sqrt((b.x - a.x) * (b.x - a.x) + (b.y - a.y) * (b.y - a.y) + 0.0)
    return dist


def integrated_flux(levels):
    flux = 0.0
    for k in range(len(levels)):  # expect: naive-accumulation
        flux = flux + levels[k] / (k + 1.0)
    return flux


def integrated_flux_fsum(levels):
    import math
    return math.fsum(v / (k + 1.0) for k, v in enumerate(levels))  # ok: naive-accumulation


def nested_totals(grid):
    grand = 0.0
    for row in grid:
        for cell in row:  # expect: naive-accumulation
            grand += cell
    return grand


def cycle_count(passes):
    cycles = 0
    for ps in passes:  # ok: naive-accumulation
        cycles += ps.count
    return cycles


def flight_clock(log, dt):
    t = 0.0
    for i, rec in enumerate(log):
        rec.time = t
        t += dt  # expect: step-accumulation
    return log


def fixed_clock(log, dt):
    for i, rec in enumerate(log):
        rec.time = i * dt  # ok: step-accumulation
    return log


def descent(model, t_end):
    t = 0.0
    h = 0.01
    while t < t_end:
        model.advance(h)
        t = t + h  # expect: step-accumulation
    return model


def phase_sweep(n, show):
    phase = 0.0
    dphi = 2.0 * pi / n
    for k in range(n):
        show(cos(phase))
        phase += dphi  # expect: step-accumulation
    return phase


def altitude_ladder(n, show):
    alt = 0
    for k in range(n):
        alt += 250  # ok: step-accumulation
        show(alt)


def sensor_distance(sample, gap):
    odometer = 0.0
    for s in sample:  # expect: naive-accumulation
        odometer += s.speed * gap  # ok: step-accumulation
    return odometer


def gust_slope(profile, z):
    return (profile(z + 1e-14) - profile(z)) / 1e-14  # expect: finite-difference-step


def gust_slope_scaled(profile, z):
    h = sqrt(finfo(float).eps) * maximum(abs(z), 1.0)
    return (profile(z + h) - profile(z)) / h  # ok: finite-difference-step


def telemetry_total(frames):
    return sum(frames, dtype=float16)  # expect: low-precision-accumulator


def telemetry_store(frames):
    return frames.astype(float32)  # ok: low-precision-accumulator


def covariance_of_drift(M):
    return linalg.inv(M)  # ok: explicit-inverse
