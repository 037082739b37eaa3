"""Trace statistics for the invented Kestrel Ridge seismograph network (corpus: statistics and summation rules)."""
import math
import statistics

import numpy as np
from numpy import mean as avg


def trace_power(trace):
    """Band power of one trace around its DC offset."""
    return np.mean(trace**2) - np.mean(trace)**2  # expect: naive-variance


def trace_power_methods(trace):
    return (trace * trace).mean() - trace.mean() ** 2  # expect: naive-variance


def trace_power_locals(trace):
    ms = avg(np.square(trace))
    m = avg(trace)
    return ms - m * m  # expect: naive-variance


def station_variance(counts):
    n = len(counts)
    s = sum(counts)
    sq = sum(c * c for c in counts)
    return (sq - s**2 / n) / (n - 1)  # expect: naive-variance


def streaming_variance(samples):
    s = 0.0
    s2 = 0.0
    n = 0
    for v in samples:
        s += v
        s2 += v * v
        n += 1
    return s2 / n - (s / n) ** 2  # expect: naive-variance


def scaled_variance(xs):
    n = len(xs)
    sx = np.sum(xs)
    sxx = np.sum(xs**2)
    return (n * sxx - sx**2) / (n * (n - 1))  # expect: naive-variance


def cross_power(north, east):
    return np.mean(north * east) - np.mean(north) * np.mean(east)  # expect: naive-variance


def cross_power_stat(a, b):
    ea = statistics.mean(a)
    eb = statistics.mean(b)
    return statistics.mean([x * y for x, y in zip(a, b)]) - ea * eb  # expect: naive-variance


def two_pass_power(trace):
    m = np.mean(trace)
    return np.mean((trace - m) ** 2)  # ok: naive-variance


def library_power(trace):
    return np.var(trace, ddof=1)  # ok: naive-variance


def welford(samples):
    n, mean, m2 = 0, 0.0, 0.0
    for v in samples:
        n += 1
        delta = v - mean
        mean += delta / n
        m2 += delta * (v - mean)
    return m2 / (n - 1)


def mismatched_moments(a, b):
    return np.mean(a**2) - np.mean(b) ** 2  # ok: naive-variance


def rms_minus_offset(trace, offset):
    return np.sqrt(np.mean(trace**2)) - offset  # ok: naive-variance


def total_energy(samples):
    energy = 0.0
    for v in samples:  # expect: naive-accumulation
        energy += v * v
    return energy


def weighted_sum(amplitudes, weights):
    acc = 0.0
    for i in range(len(amplitudes)):  # expect: naive-accumulation
        acc = acc + weights[i] * amplitudes[i]
    return acc


def mean_gain(stations):
    total = 0
    for st in stations:  # expect: naive-accumulation
        if st.active:
            total += st.gain / st.sensitivity
    return total / len(stations)


def accepted_count(picks):
    count = 0
    for pk in picks:  # ok: naive-accumulation
        if pk.accepted:
            count += 1
    return count


def three_channel_sum(z, n, e):
    s = 0.0
    for ch in (z, n, e):  # ok: naive-accumulation
        s += ch
    return s


def label_list(names):
    label = ""
    for nm in names:  # ok: naive-accumulation
        label += nm + ","
    return label


def compensated_sum(samples):
    s = 0.0
    c = 0.0
    for v in samples:  # ok: naive-accumulation
        y = v - c
        t = s + y
        c = (t - s) - y
        s = t
    return s


def exact_sum(samples):
    return math.fsum(samples)  # ok: naive-accumulation


def running_display(samples, show):
    level = 0.0
    for v in samples:  # ok: naive-accumulation
        level += v
        show(level)


def sample_times(n, dt):
    t = 0.0
    times = []
    for i in range(n):
        t += dt  # expect: step-accumulation
        times.append(t)
    return times


def record(sensor, duration, dt):
    t = 0.0
    while t < duration:
        sensor.read(t)
        t += dt  # expect: step-accumulation
    return sensor


def tick_labels(t0, n):
    t = t0
    labels = []
    for k in range(1, n + 1):
        t = t + 0.1  # expect: step-accumulation
        labels.append(f"{t:.1f}")
    return labels


def grid_times(n, dt):
    return [i * dt for i in range(n)]  # ok: step-accumulation


def half_second_ticks(n, show):
    t = 0.0
    for i in range(n):
        t += 0.5  # ok: step-accumulation
        show(t)


def sample_index(picks):
    idx = 0
    for pk in picks:
        idx += 1  # ok: step-accumulation
        pk.index = idx
    return idx
