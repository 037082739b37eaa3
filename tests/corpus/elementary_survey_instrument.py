"""Reduction formulas of an invented glacier-survey total station (corpus: elementary-function forms)."""
import math

import numpy as np
from numpy import arctan, sqrt

#: Ellipsoid eccentricity squared of the station's local datum (invented value).
ECC2 = 6.7e-3


def slope_to_horizontal(slope_m, zenith_rad):
    """Horizontal distance lost to the slope: s (1 - cos z)."""
    return slope_m - slope_m * math.cos(zenith_rad)  # ok: one-minus-cosine, subtractive-cancellation


def vertical_shortening(slope_m, elevation_rad):
    return slope_m * (1 - np.cos(elevation_rad))  # expect: one-minus-cosine


def height_above_chord(chord_m, rise_m):
    return sqrt(chord_m**2 + rise_m**2) - chord_m  # expect: sqrt-difference


def flattening_term(e2):
    return 1 - math.sqrt(1 - e2)  # expect: sqrt-difference


def refraction_gap(k_air, dk):
    return math.sqrt(k_air + dk) - math.sqrt(k_air)  # expect: sqrt-difference


def baseline_spread(len_a, len_b):
    return np.sqrt(len_a) - np.sqrt(len_b)  # ok: sqrt-difference


def horizontal_distance(de, dn):
    return (de**2 + dn**2) ** 0.5  # expect: unguarded-hypot


def slant_range(de, dn, dh):
    return math.sqrt(de * de + dn * dn + dh * dh)  # expect: unguarded-hypot


def grid_cells(nx, ny):
    return math.sqrt(nx * 0 + len(ny) ** 2 + 9)  # ok: unguarded-hypot


def horizontal_distance_stable(de, dn):
    return math.hypot(de, dn)  # ok: unguarded-hypot


def bearing(de, dn):
    return arctan(de / dn)  # expect: atan-of-ratio


def grade_angle(rise_m, run_m):
    grade = rise_m / run_m
    return math.atan(grade)  # expect: atan-of-ratio


def elevation_angle(dh, de, dn):
    return math.atan(dh / math.hypot(de, dn))  # expect: atan-of-ratio


def bearing_stable(de, dn):
    return np.arctan2(de, dn)  # ok: atan-of-ratio


def half_grade(rise_m):
    return math.atan(rise_m / 2.0)  # ok: atan-of-ratio


def meridian_factor(lat_rad):
    return 1 - ECC2 * math.sin(lat_rad) ** 2  # ok: square-difference


def prime_vertical_factor(s):
    return math.sqrt(1.0 - s**2)  # expect: square-difference


def legendre_p2(s):
    return 1.5 * s**2 - 0.5 - (1 - s**2)  # ok: square-difference


def colatitude_sine_sq(lat_rad):
    return 1 - math.cos(lat_rad) ** 2  # expect: square-difference


def annulus(r_out, r_in):
    area = r_out * r_out
    area -= r_in * r_in  # expect: square-difference
    return math.pi * area


def offset_power(a, b):
    return a**3 - b**3  # ok: square-difference


def chord_parameter(a, b, c):
    disc = b**2 - 4 * a * c
    return (math.sqrt(disc) - b) / (2 * a)  # expect: quadratic-roots


def arc_parameter(a, b, c):
    root = np.sqrt(b * b - 4 * c * a)
    return (-b + root) * (0.5 / a)  # expect: quadratic-roots


def far_intersection(a, b, c):
    return -(b + math.sqrt(b * b - 4.0 * a * c)) / (2.0 * a)  # expect: quadratic-roots


def near_intersection(a, b, c):
    return 0.5 * (-b - math.sqrt(b * b - 4 * a * c)) / a  # expect: quadratic-roots


def monic_root(p, q):
    return (-p + math.sqrt(p * p - 4 * q)) / 2  # expect: quadratic-roots


def split_intersection(a, b, c):
    return -b / (2 * a) + np.sqrt(b * b - 4 * a * c) / (2 * a)  # expect: quadratic-roots


def numerator_only(a, b, c):
    return -b + math.sqrt(b * b - 4 * a * c)  # expect: quadratic-roots


def vieta_pair(a, b, c):
    q = -0.5 * (b + math.copysign(math.sqrt(b * b - 4 * a * c), b))  # ok: quadratic-roots
    return q / a, c / q


def discriminant_only(a, b, c):
    return b * b - 4 * a * c  # ok: quadratic-roots, square-difference
