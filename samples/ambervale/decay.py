"""Time and space dependence: scintillator afterglow, membrane modes, substrate heating.

Much of this was ported from the stand controller's firmware, which had no libm; the
series below replaced library calls there and were carried over unchanged when the
code moved to Python.
"""
import math

from scipy import special

#: Afterglow time constant of the CsI:Tl calibration crystal, seconds.
AFTERGLOW_TAU_S = 1.0e-3
#: sqrt(pi), used by the asymptotic forms.
SQRT_PI = 1.7724538509055159


# auditor: domain t_s=0.002..0.015, tau_s=0.001..0.001
def afterglow_fraction(t_s, tau_s, n_terms=60):
    """Fraction exp(-t / tau) of the scintillation still emitted at time t.

    Firmware port: the Taylor series of exp(-x), summed term by term.
    """
    x = t_s / tau_s
    term = 1.0
    total = 1.0
    for k in range(1, n_terms):
        term *= -x / k
        total += term
    return total


def afterglow_fraction_stable(t_s, tau_s, n_terms=60):
    """Same fraction from the positive series of exp(+x), inverted: no cancellation."""
    x = t_s / tau_s
    term = 1.0
    total = 1.0
    for k in range(1, n_terms):
        term *= x / k
        total += term
    return 1.0 / total


# auditor: domain r_m=0..0.004, radius_m=0.004..0.004, mode_root=18.07..24.35
def membrane_mode_shape(r_m, radius_m, mode_root):
    """Normalised deflection J0(j0n r / a) of mode n of the pressure-sensor membrane.

    J0 is summed from its power series; mode_root is the n-th zero of J0 (the six
    highest modes of interest have roots between 18 and 25).
    """
    x = mode_root * r_m / radius_m
    total = 0.0
    for k in range(50):
        total += (-1) ** k * (0.5 * x) ** (2 * k) / math.factorial(k) ** 2
    return total


# auditor: domain u=2.0..4.0
def erfc_large(u, n_terms=12):
    """Complementary error function for u >= 2 from its asymptotic expansion.

    erfc(u) ~ exp(-u^2) / (u sqrt(pi)) * sum_n (-1)^n (2n-1)!! / (2u^2)^n,
    with a fixed number of terms (A&S 7.1.23).
    """
    term = 1.0
    total = 1.0
    for n in range(1, n_terms):
        term *= -(2 * n - 1) / (2.0 * u * u)
        total += term
    return math.exp(-u * u) / (u * SQRT_PI) * total


# auditor: domain depth_m=1e-4..1e-3, diffusivity_m2s=1e-5..1e-4, time_s=0.01..1
def substrate_temperature_rise(depth_m, diffusivity_m2s, time_s, surface_rise_k):
    """Temperature rise (K) at a depth below a surface stepped by surface_rise_k.

    Semi-infinite solid: dT = dT_s erfc(z / (2 sqrt(alpha t))). Uses the library erfc.
    """
    u = depth_m / (2.0 * math.sqrt(diffusivity_m2s * time_s))
    return surface_rise_k * math.erfc(u)


# auditor: domain x=3.0..8.0
def hot_wire_e1(x, n_terms=15):
    """Exponential integral E1(x) for the transient hot-wire conductivity probe.

    The probe reads dT = q / (4 pi k) E1(r^2 / (4 alpha t)); at early times x is large and
    the asymptotic expansion E1(x) ~ exp(-x) / x sum_k (-1)^k k! / x^k is used.
    """
    term = 1.0
    total = 1.0
    for k in range(1, n_terms):
        term *= -k / x
        total += term
    return math.exp(-x) / x * total


def hot_wire_e1_library(x):
    """E1(x) from scipy's implementation, which switches methods by range."""
    return special.exp1(x)
