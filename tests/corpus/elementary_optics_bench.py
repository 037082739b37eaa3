"""Alignment and interferometry helpers of an invented optics bench (corpus: elementary-function forms)."""
import cmath
import math

import numpy as np
from math import cos, sqrt as root


def mirror_sag(radius_m, half_angle_rad):
    """Depth of a spherical mirror at the rim of its aperture."""
    return radius_m * (1.0 - math.cos(half_angle_rad))  # expect: one-minus-cosine


def mirror_sag_stable(radius_m, half_angle_rad):
    return 2.0 * radius_m * math.sin(half_angle_rad / 2) ** 2  # ok: one-minus-cosine


def tilt_shortening(length_m, tilt_rad):
    c = cos(tilt_rad)
    return length_m * (c - 1)  # expect: one-minus-cosine


def tilt_profile(length_m, tilts_rad):
    return length_m * (1 - np.cos(tilts_rad))  # expect: one-minus-cosine


def fringe_visibility_loss(delta):
    loss = np.cos(delta)
    loss -= 1.0  # expect: one-minus-cosine
    return -loss


def projected_length(length_m, tilt_rad):
    return length_m * (1 - math.sin(tilt_rad))  # ok: one-minus-cosine


def half_wave_offset(phase):
    return 1 - math.cos(math.pi / 3)  # ok: one-minus-cosine


def path_difference(distance_m, offset_m):
    """Extra path of an off-axis ray: sqrt(d^2 + o^2) - d."""
    return root(distance_m * distance_m + offset_m * offset_m) - distance_m  # expect: sqrt-difference


def path_difference_stable(distance_m, offset_m):
    o2 = offset_m * offset_m
    return o2 / (root(distance_m * distance_m + o2) + distance_m)  # ok: sqrt-difference


def index_step(n_sq, dn_sq):
    """Change of refractive index from a small change of its square."""
    return np.sqrt(n_sq + dn_sq) - np.sqrt(n_sq)  # expect: sqrt-difference


def relative_thickness(strain):
    return math.sqrt(1.0 + strain) - 1.0  # expect: sqrt-difference


def detector_noise_step(flux, dflux, gain):
    shot_hi = math.sqrt(gain * (flux + dflux))
    shot_lo = math.sqrt(gain * flux)
    return shot_hi - shot_lo  # expect: sqrt-difference


def two_arm_mismatch(arm_a, arm_b):
    return math.sqrt(arm_a) - math.sqrt(arm_b)  # ok: sqrt-difference


def beam_radius(x_mm, y_mm):
    return math.sqrt(x_mm * x_mm + y_mm * y_mm)  # expect: unguarded-hypot


def spot_radii(xs, ys):
    return np.sqrt(xs**2 + ys**2)  # expect: unguarded-hypot


def mount_offset(dx, dy, dz):
    r2 = dx**2 + dy**2 + dz**2
    return math.sqrt(r2)  # expect: unguarded-hypot


def beam_radius_stable(x_mm, y_mm):
    return math.hypot(x_mm, y_mm)  # ok: unguarded-hypot


def pixel_distance(row, col, rows):
    return math.sqrt(len(rows) ** 2 + 4 ** 2)  # ok: unguarded-hypot


def fringe_phase(i_signal, q_signal):
    return math.atan(q_signal / i_signal)  # expect: atan-of-ratio


def wedge_angle(thickness_step, width):
    return np.arctan(thickness_step / np.abs(width))  # expect: atan-of-ratio


def fringe_phase_stable(i_signal, q_signal):
    return math.atan2(q_signal, i_signal)  # ok: atan-of-ratio


def lens_half_angle(focal_length):
    return math.atan(1 / focal_length)  # ok: atan-of-ratio


def ring_area(r_outer, r_inner):
    return math.pi * (r_outer**2 - r_inner**2)  # expect: square-difference


def cavity_detuning(length, dl):
    stretched = length + dl
    return stretched * stretched - length * length  # expect: square-difference


def ring_area_stable(r_outer, r_inner):
    return math.pi * (r_outer - r_inner) * (r_outer + r_inner)  # ok: square-difference


def focus_shift(a, b, c):
    """Root of the thin-lens focusing quadratic a s^2 + b s + c = 0."""
    return (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)  # expect: quadratic-roots


def focus_shift_complex(a, b, c):
    d = cmath.sqrt(b**2 - 4.0 * a * c)
    return (-b - d) / (2.0 * a)  # expect: quadratic-roots


def focus_shift_stable(a, b, c):
    q = -0.5 * (b + math.copysign(math.sqrt(b * b - 4 * a * c), b))  # ok: quadratic-roots
    return c / q
