"""Lock-in / IQ readout, trigger statistics, stage alignment and acquisition loops.

The IQ demodulator delivers in-phase and quadrature voltages; everything downstream of
it (phase, amplitude, noise, trigger thresholds) lives here.
"""
import math

import numpy as np
from scipy import special


# auditor: domain i_v=-1..1, q_v=-1..1
def iq_phase(i_v, q_v):
    """Phase (rad) of the demodulated carrier, for the resonator-tracking loop."""
    return math.atan(q_v / i_v)


def iq_phase_full_circle(i_v, q_v):
    """Phase (rad) over the full circle, as the newer tracking loop does it."""
    return math.atan2(q_v, i_v)


def iq_amplitude(i_v, q_v):
    """Amplitude (V) of the demodulated carrier; hypot neither overflows nor underflows."""
    return math.hypot(i_v, q_v)


# auditor: domain threshold_sigma=4..9
def false_trigger_probability(threshold_sigma):
    """Chance that Gaussian readout noise alone crosses the trigger threshold (one-sided)."""
    return 1.0 - special.ndtr(threshold_sigma)


def false_trigger_probability_tail(threshold_sigma):
    """Same probability from the lower tail, which keeps its digits (ndtr(-z) = 1 - ndtr(z))."""
    return special.ndtr(-threshold_sigma)


def trigger_efficiency(signal_sigma, threshold_sigma):
    """Chance that a pulse of the given height clears the threshold (of order one: no tail)."""
    return special.ndtr(signal_sigma - threshold_sigma)


# auditor: domain length_m=0.01..0.5, tilt_rad=1e-7..1e-3
def gauge_cosine_error(length_m, tilt_rad):
    """Length error (m) of the displacement gauge when its axis is tilted by tilt_rad.

    The capacitive gauges are aligned to within a milliradian, usually far better.
    """
    return length_m * (1.0 - math.cos(tilt_rad))


def gauge_cosine_error_stable(length_m, tilt_rad):
    """Same error through the half-angle identity 1 - cos t = 2 sin^2(t / 2)."""
    s = math.sin(0.5 * tilt_rad)
    return 2.0 * length_m * s * s


# auditor: domain samples_v=0.499..0.501
def readout_noise_variance(samples_v):
    """Variance (V^2) of a block of ADC samples riding on the 0.5 V bias offset."""
    return np.mean(samples_v**2) - np.mean(samples_v) ** 2


def readout_noise_variance_centred(samples_v):
    """Same variance, centred first (two-pass), as numpy's var does."""
    centred = samples_v - np.mean(samples_v)
    return np.mean(centred * centred)


# auditor: domain e1_k=30..40, e2_k=20..30, e3_k=10..20, temp_k=0.02..0.1
def adsorption_free_energy(e1_k, e2_k, e3_k, temp_k):
    """Free energy per atom (K) of He-3 adsorbed on the three site classes of the sinter.

    -T ln sum_i exp(E_i / T) with binding energies E_i in kelvin.
    """
    energies = np.array([e1_k, e2_k, e3_k])
    return -temp_k * np.log(np.sum(np.exp(energies / temp_k)))


def deepest_site_fraction(e1_k, e2_k, e3_k, temp_k):
    """Fraction of atoms in the deepest site class, with the exponents shifted by their max."""
    scaled = np.array([e1_k, e2_k, e3_k]) / temp_k
    weights = np.exp(scaled - np.max(scaled))
    return weights[0] / np.sum(weights)


# auditor: domain dt_s=1e-4..1e-3, n_steps=2000..2000
def ramp_elapsed_time(dt_s, n_steps):
    """Elapsed time (s) at the end of a heater ramp, as the stand controller counts it."""
    t = 0.0
    for _ in range(n_steps):
        t += dt_s
    return t


def ramp_sample_time(t0_s, dt_s, index):
    """Time (s) of sample `index`, computed afresh from the start (no drift)."""
    return t0_s + index * dt_s


# auditor: domain rate_hz=1e3..1e5, frame_s=1e-3..1e-2, n_frames=3000..3000
def integrated_counts(rate_hz, frame_s, n_frames):
    """Photon counts integrated over n_frames frames, in the DAQ's float32 register layout."""
    total = np.float32(0.0)
    for _ in range(n_frames):
        total += np.float32(rate_hz * frame_s)
    return total


def integrated_counts_exact(rate_hz, frame_s, n_frames):
    """Same count, multiplied out in double precision."""
    return rate_hz * frame_s * n_frames
