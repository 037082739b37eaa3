"""Resistance thermometry, thermistors and noise thermometry for the Ambervale test stands.

Units are SI throughout (kelvin, ohm, metre, hertz, watt) unless a name says otherwise.
Platinum sensors follow the Callendar-Van Dusen relation with the IEC 60751 coefficients;
the ruthenium-oxide chips on the mixing-chamber plate follow a single-exponential
(Arrhenius-like) law fitted by the 2009 cool-down campaign.
"""
import math

#: Boltzmann constant, J/K (CODATA 2018, exact).
K_B = 1.380649e-23
#: Planck constant, J s (CODATA 2018, exact).
H_PLANCK = 6.62607015e-34
#: Callendar-Van Dusen coefficients above 0 degC (IEC 60751): R = R0 (1 + A t + B t^2).
IEC_A = 3.9083e-3
IEC_B = -5.775e-7
#: Ruthenium-oxide chip RX-7 fit: R(T) = R_INF exp(T0_K / T).
RX7_R_INF = 1010.0
RX7_T0_K = 2.31
#: Lorenz number, W ohm / K^2 (Sommerfeld value), for Wiedemann-Franz heat links.
LORENZ = 2.44e-8
#: Noise-thermometer bandwidth of the SQUID readout chain, Hz.
NOISE_BANDWIDTH = 1.0e4


# auditor: domain freq_hz=1e3..1e7, temp_k=0.05..4
def photon_occupation(freq_hz, temp_k):
    """Mean thermal photon number in a readout line mode (Bose-Einstein).

    Used to budget the noise injected by the warm attenuator stages; the readout
    runs at audio and low radio frequencies, where h f << k T.
    """
    x = H_PLANCK * freq_hz / (K_B * temp_k)
    return 1.0 / (math.exp(x) - 1.0)


def planck_spectral_radiance(freq_hz, temp_k):
    """Spectral radiance of a black body, W / (m^2 sr Hz). Already written with expm1."""
    c = 299792458.0
    x = H_PLANCK * freq_hz / (K_B * temp_k)
    return 2.0 * H_PLANCK * freq_hz**3 / (c * c) / math.expm1(x)


# auditor: domain dev=1e-9..1e-4
def pt100_temperature(dev):
    """Celsius temperature of a platinum sensor from the bridge's ratio deviation dev = R/R0 - 1.

    Inverts R = R0 (1 + A t + B t^2) (t >= 0 branch) with the quadratic formula. The
    ratio bridge reports the deviation from the reference resistor directly, in parts
    per million; the ice-point checks before each cool-down read a few ppm.
    """
    a = IEC_B
    b = IEC_A
    c = -dev
    disc = b * b - 4.0 * a * c
    return (-b + math.sqrt(disc)) / (2.0 * a)


def pt100_temperature_stable(dev):
    """Same inversion, written with the cancellation-free root (Vieta's formula)."""
    a = IEC_B
    b = IEC_A
    c = -dev
    q = -0.5 * (b + math.copysign(math.sqrt(b * b - 4.0 * a * c), b))
    return c / q


# auditor: domain temp_k=0.05..4
def rx7_sensitivity(temp_k):
    """dR/dT of the RX-7 chip in ohm/K: the prefactor times a forward difference of the exponential.

    The step was chosen "as small as possible" by the original author.
    """
    h = 1e-12
    return RX7_R_INF * ((math.exp(RX7_T0_K / (temp_k + h)) - math.exp(RX7_T0_K / temp_k)) / h)


def rx7_sensitivity_analytic(temp_k):
    """dR/dT of the RX-7 chip from the derivative of the fit law (no step at all)."""
    return -RX7_R_INF * RX7_T0_K / (temp_k * temp_k) * math.exp(RX7_T0_K / temp_k)


# auditor: domain temp_k=0.01..4, step_k=1e-9..1e-6, r_ohm=10..1000
def johnson_noise_step(temp_k, step_k, r_ohm):
    """Change of the rms Johnson noise voltage when the bath warms by step_k, in volts.

    The noise thermometer resolves microkelvin steps on a 10 mK to 4 K bath.
    """
    v_hot = math.sqrt(4.0 * K_B * (temp_k + step_k) * r_ohm * NOISE_BANDWIDTH)
    v_cold = math.sqrt(4.0 * K_B * temp_k * r_ohm * NOISE_BANDWIDTH)
    return v_hot - v_cold


def johnson_noise_voltage(temp_k, r_ohm):
    """rms Johnson noise voltage, V (no subtraction: nothing to cancel)."""
    return math.sqrt(4.0 * K_B * temp_k * r_ohm * NOISE_BANDWIDTH)


# auditor: domain t_cold=0.02..1, dt=1e-8..1e-5, r_link=0.01..1
def link_heat_flow(t_cold, dt, r_link):
    """Heat flow (W) through a metallic link at Wiedemann-Franz conductivity.

    P = L0 / (2 R) * (T_hot^2 - T_cold^2); the regulation loop holds T_hot a few
    microkelvin above the plate.
    """
    t_hot = t_cold + dt
    return LORENZ / (2.0 * r_link) * (t_hot**2 - t_cold**2)


def link_heat_flow_stable(t_cold, dt, r_link):
    """Same heat flow with the difference of squares factored: (T_h - T_c)(T_h + T_c)."""
    return LORENZ / (2.0 * r_link) * dt * (2.0 * t_cold + dt)


# auditor: domain dl_m=1e-10..1e-6, l0_m=0.005..0.05
def dilatometer_log_strain(dl_m, l0_m):
    """True (logarithmic) strain of a sample from the capacitance dilatometer.

    Length changes on cooling below 4 K are nanometres on a 5-50 mm sample.
    """
    return math.log(1.0 + dl_m / l0_m)


def dilatometer_log_strain_stable(dl_m, l0_m):
    """Same strain through log1p (accurate for tiny dl / l0)."""
    return math.log1p(dl_m / l0_m)


# auditor: domain gap_j=1e-24..1e-22, temp_k=0.01..0.05
def two_level_free_energy(gap_j, temp_k):
    """Free energy (J) of a two-level defect, ground state at zero: -kT ln(1 + e^(-gap/kT)).

    Tunnelling defects in the amorphous substrate have gaps of 0.1-10 K; the plate
    sits at 10-50 mK, so the excited state is almost empty.
    """
    kt = K_B * temp_k
    return -kt * math.log(1.0 + math.exp(-gap_j / kt))
