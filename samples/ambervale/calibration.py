"""Calibration fits (resistance to temperature) and heat-load integrals.

The thermometer calibration fits T against powers of ln R, as in the lab's 1994
calibration memo; fits run on the 20-40 fixed points of a calibration cool-down.
"""
import math

import numpy as np

#: Highest power of ln R kept in a calibration fit.
FIT_DEGREE = 7
#: Thermal conductivity of the G-10 support rods: k(T) = K0 * T**K_EXP, W/(m K).
G10_K0 = 0.0123
G10_K_EXP = 1.18


class CalibrationError(ValueError):
    """A calibration that cannot be trusted."""


def fit_calibration(resistance_ohm, temp_k, degree=FIT_DEGREE):
    """Coefficients c of T = sum_j c_j (ln R)^j, least squares, highest power first."""
    design = np.vander(np.log(resistance_ohm), degree + 1)
    gram = design.T @ design
    check_gram(gram)
    return np.linalg.inv(gram) @ design.T @ temp_k


def check_gram(gram):
    """Refuse a singular normal matrix before inverting it."""
    if abs(np.linalg.det(gram)) < 1e-12:
        raise CalibrationError("calibration points are degenerate")


def fit_calibration_lstsq(resistance_ohm, temp_k, degree=FIT_DEGREE):
    """Same fit by an orthogonal factorisation of the design matrix (no normal equations)."""
    design = np.vander(np.log(resistance_ohm), degree + 1)
    if np.linalg.cond(design) > 1e12:
        raise CalibrationError("calibration points are degenerate")
    coeffs, *_ = np.linalg.lstsq(design, temp_k, rcond=None)
    return coeffs


def apply_calibration(coeffs, resistance_ohm):
    """Temperature (K) from a resistance with fitted coefficients, by Horner's rule."""
    return np.polyval(coeffs, np.log(resistance_ohm))


def stage_temperature_rise(conductance_w_per_k, heat_loads_w):
    """Steady-state rise (K) of each stage of the thermal network: G dT = P.

    The conductance matrix of the five-stage stand spans six decades (copper braids
    against G-10 rods), so G is badly conditioned.
    """
    return np.linalg.inv(conductance_w_per_k) @ heat_loads_w


def solve_bridge(conductance, currents):
    """Node voltages of the bridge network: solve G v = i directly."""
    return np.linalg.solve(conductance, currents)


# auditor: domain t_cold=0.05..1, t_hot=3..4, n_panels=4000..4000
def rod_heat_load(t_cold, t_hot, n_panels):
    """Conducted heat (W per unit A/L) along a G-10 rod, midpoint rule over temperature."""
    width = (t_hot - t_cold) / n_panels
    total = 0.0
    for i in range(n_panels):
        t_mid = t_cold + (i + 0.5) * width
        total += G10_K0 * t_mid**G10_K_EXP * width
    return total


def rod_heat_load_closed_form(t_cold, t_hot):
    """Same integral in closed form: K0 (T_h^(n+1) - T_c^(n+1)) / (n + 1); nothing cancels."""
    n1 = G10_K_EXP + 1.0
    return G10_K0 * (t_hot**n1 - t_cold**n1) / n1


# auditor: domain mobility=1e-4..1e-2, field_t=1e-4..1e-1
def magnetoresistance(mobility, field_t, rho0=1.0):
    """Relative magnetoresistance (rho(B) - rho0) / rho0 of the Hall-bar thermometer.

    Two-band model at low field: rho(B) = rho0 (1 + (mu B)^2).
    """
    rho_b = rho0 * (1.0 + (mobility * field_t) ** 2)
    return (rho_b - rho0) / rho0


def magnetoresistance_direct(mobility, field_t):
    """Same quantity without forming rho(B) first."""
    return (mobility * field_t) ** 2


def sensor_weight(values):
    """Total weight of a set of calibration points, summed with a compensated sum."""
    return math.fsum(values)
