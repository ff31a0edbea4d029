"""Metallicity-dependent constants a_n, b_n and critical masses of Hurley, Pols & Tout (2000).

Citation: Hurley J. R., Pols O. R., Tout C. A., 2000, "Comprehensive analytic formulae for stellar
evolution as a function of mass and metallicity", MNRAS 315, 543 -- Appendix (coefficient tables),
section 2 eqs. (1)-(3) (critical masses) [equation numbers as quoted in code comments of public
implementations, not checked against the paper PDF].

Each constant starts as ``alpha + beta zeta + gamma zeta^2 + eta zeta^3 + mu zeta^4`` with
``zeta = log10(Z/0.02)`` and is then modified by the special cases listed in the project's reference
notes (formulae.md section 2.2). The numbers are typed in from the verified transcription of the
Appendix in formulae.md section 2.10, which matches the two public code families (SSE Fortran data
block and COMPAS constants) digit for digit.

Where the public implementations disagree (formulae.md section 2.11) this module follows the
original SSE Fortran forms, as the notes recommend: the second clamp on a33; the ``-13.3 - 18.6 zeta``
clamp on a79; b3 computed as a power of ten before the ``Z > 0.004`` floor (continuous in Z); the
b17 exponent 0.637176 with its renormalisation at M_FGB; and (in
:mod:`~hrstage.models.hpt2000.main_sequence`) the linear-in-Z form of the eq. (6) factor x. One exception: M_FGB (eq. 3) is written in the
paper's form with the rounded constants 13.048 and 0.0012 (the form behind the notes' check
values); the SSE code's unrounded form gives M_FGB higher by 1e-5 at Z = 0.02 and 0.17 % at Z = 1e-4.

Validity: 1e-4 <= Z <= 0.03 (checked; ``ValueError`` outside). Coefficient sets are cached per
distinct Z value.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..metallicity import check_z

N_A = 81
N_B = 57

#: Extra constants used with the a_n (R_TMS and L_BGB fits).
C1 = -8.672073e-2
C2 = 9.301992
C3 = 4.637345

# Appendix rows (alpha, beta, gamma, eta, mu), index n as in the paper. Rows without an entry are
# defined only by a special formula (a17, a33, b2, b3, b17, b26, b45, b47) or unused (b8, b35, b50).
_A_ROWS = {
    1: (1593.89, 2053.038, 1231.226, 232.7785, 0.0),
    2: (2706.708, 1483.131, 577.2723, 74.1123, 0.0),
    3: (146.6143, -104.8442, -67.95374, -13.91127, 0.0),
    4: (0.0414196, 0.04564888, 0.02958542, 0.005571483, 0.0),
    5: (0.3426349, 0.0, 0.0, 0.0, 0.0),
    6: (19.49814, 1.758178, -6.008212, -4.470533, 0.0),
    7: (4.90383, 0.0, 0.0, 0.0, 0.0),
    8: (0.05212154, 0.03166411, -0.002750074, -0.002271549, 0.0),
    9: (1.312179, -0.3294936, 0.0923186, 0.02610989, 0.0),
    10: (0.8073972, 0.0, 0.0, 0.0, 0.0),
    11: (1.031538, -0.243448, 7.732821, 6.460705, 1.374484),
    12: (1.043715, -1.577474, -5.168234, -5.596506, -1.299394),
    13: (785.9573, -8.542048, -26.42511, -9.585707, 0.0),
    14: (3858.911, 2459.681, -76.30093, -348.6057, -48.61703),
    15: (288.872, 295.2979, 185.0341, 37.97254, 0.0),
    16: (7.19658, 0.5613746, 0.3805871, 0.08398728, 0.0),
    18: (0.2187715, -2.154437, -3.768678, -1.975518, -0.3021475),
    19: (1.46644, 1.839725, 6.442199, 4.023635, 0.6957529),
    20: (26.52091, 81.78458, 115.6058, 76.33811, 19.50698),
    21: (1.472103, -2.947609, -3.312828, -0.9945065, 0.0),
    22: (3.071048, -5.679941, -9.745523, -3.594543, 0.0),
    23: (2.61789, 1.019135, -0.03292551, -0.07445123, 0.0),
    24: (0.01075567, 0.01773287, 0.009610479, 0.001732469, 0.0),
    25: (1.476246, 1.899331, 1.19501, 0.3035051, 0.0),
    26: (5.502535, -0.06601663, 0.09968707, 0.03599801, 0.0),
    27: (95.11033, 68.19618, -10.45625, -14.74939, 0.0),
    28: (31.13458, 10.12033, -4.650511, -2.463185, 0.0),
    29: (1.413057, 0.4578814, -0.06850581, -0.05588658, 0.0),
    30: (39.10862, 51.96646, 22.6497, 2.87368, 0.0),
    31: (4.597479, -0.2855179, 0.2709724, 0.0, 0.0),
    32: (6.682518, 0.2827718, -0.07294429, 0.0, 0.0),
    34: (0.1910302, 0.1158624, 0.0334899, 0.002599706, 0.0),
    35: (0.3931056, 0.07277637, -0.1366593, -0.04508946, 0.0),
    36: (0.3267776, 0.1204424, 0.09988332, 0.02455361, 0.0),
    37: (0.5990212, 0.05570264, 0.06207626, 0.01777283, 0.0),
    38: (0.7330122, 0.5192827, 0.2316416, 0.008346941, 0.0),
    39: (1.172768, -0.1209262, -0.1193023, -0.02859837, 0.0),
    40: (0.3982622, -0.2296279, -0.2262539, -0.05219837, 0.0),
    41: (3.571038, -0.02223635, -0.02611794, -0.006359648, 0.0),
    42: (1.9848, 1.1386, 0.3564, 0.0, 0.0),
    43: (0.063, 0.0481, 0.00984, 0.0, 0.0),
    44: (1.2, 2.45, 0.0, 0.0, 0.0),
    45: (0.23214, 0.001828075, -0.02232007, -0.003378734, 0.0),
    46: (0.01163659, 0.003427682, 0.001421393, -0.003710666, 0.0),
    47: (0.0104802, -0.01231921, -0.0168686, -0.004234354, 0.0),
    48: (1.55559, -0.3223927, -0.5197429, -0.1066441, 0.0),
    49: (0.0977, -0.231, -0.0753, 0.0, 0.0),
    50: (0.24, 0.18, 0.595, 0.0, 0.0),
    51: (0.33, 0.132, 0.218, 0.0, 0.0),
    52: (1.1064, 0.415, 0.18, 0.0, 0.0),
    53: (1.19, 0.377, 0.176, 0.0, 0.0),
    54: (0.3855707, -0.6104166, 5.676742, 10.60894, 5.284014),
    55: (0.3579064, -0.6442936, 5.494644, 10.54952, 5.280991),
    56: (0.9587587, 0.8777464, 0.2017321, 0.0, 0.0),
    57: (1.5135, 0.3769, 0.0, 0.0, 0.0),
    58: (0.4907546, -0.1683928, -0.3108742, -0.07202918, 0.0),
    59: (4.53707, -4.465455, -1.61269, -1.623246, 0.0),
    60: (1.79622, 0.281402, 1.423325, 0.3421036, 0.0),
    61: (2.256216, 0.37734, 1.537867, 0.4396373, 0.0),
    62: (0.0843, -0.0475, -0.0352, 0.0, 0.0),
    63: (0.0736, 0.0749, 0.04426, 0.0, 0.0),
    64: (0.136, 0.0352, 0.0, 0.0, 0.0),
    65: (0.001564231, 0.001653042, -0.004439786, -0.004951011, -0.00121653),
    66: (1.477, 0.296, 0.0, 0.0, 0.0),
    67: (5.210157, -4.143695, -2.12087, 0.0, 0.0),
    68: (1.116, 0.166, 0.0, 0.0, 0.0),
    69: (1.071489, -0.1164852, -0.08623831, -0.01582349, 0.0),
    70: (0.7108492, 0.7935927, 0.3926983, 0.03622146, 0.0),
    71: (3.478514, -0.02585474, -0.01512955, -0.002833691, 0.0),
    72: (0.9132108, -0.1653695, 0.0, 0.03636784, 0.0),
    73: (0.003969331, 0.004539076, 0.001720906, 0.0001897857, 0.0),
    74: (1.6, 0.764, 0.3322, 0.0, 0.0),
    75: (0.8109, -0.6282, 0.0, 0.0, 0.0),
    76: (0.01192334, 0.01083057, 1.230969, 1.551656, 0.0),
    77: (-0.1668868, 0.5818123, -11.05027, -16.6807, 0.0),
    78: (0.7615495, 0.1068243, -0.2011333, -0.09371415, 0.0),
    79: (9.409838, 1.522928, 0.0, 0.0, 0.0),
    80: (-0.2711, -0.5756, -0.0838, 0.0, 0.0),
    81: (2.493, 1.1475, 0.0, 0.0, 0.0),
}
_B_ROWS = {
    1: (0.397, 0.28826, 0.5293, 0.0, 0.0),
    4: (0.9960283, 0.8164393, 2.38383, 2.223436, 0.8638115),
    5: (0.2561062, 0.07072646, -0.05444596, -0.05798167, -0.01349129),
    6: (1.157338, 1.467883, 4.299661, 3.1305, 0.699208),
    7: (0.4022765, 0.305001, 0.9962137, 0.7914079, 0.1728098),
    9: (2751.631, 355.7098, 0.0, 0.0, 0.0),
    10: (-0.03820831, 0.05872664, 0.0, 0.0, 0.0),
    11: (107.1738, -89.70339, -39.49739, 0.0, 0.0),
    12: (734.8793, -153.102, -37.937, 0.0, 0.0),
    13: (9.219293, -2.005865, -0.5561309, 0.0, 0.0),
    14: (2.917412, 1.57529, 0.5751814, 0.0, 0.0),
    15: (3.629118, -0.9112722, 1.042291, 0.0, 0.0),
    16: (4.916389, 2.862149, 0.784485, 0.0, 0.0),
    18: (54.96045, -12.89968, 6.385758, 0.0, 0.0),
    19: (1.832694, -0.05766608, 0.05696128, 0.0, 0.0),
    20: (121.1104, 0.0, 0.0, 0.0, 0.0),
    21: (221.4088, 218.7113, 11.70177, -26.3534, 0.0),
    22: (2.063983, 0.7363827, 0.2654323, -0.06140719, 0.0),
    23: (2.00316, 0.9388871, 0.965645, 0.2362266, 0.0),
    24: (16.09901, 7.391573, 22.7701, 8.334227, 0.0),
    25: (0.17475, 0.06271202, -0.02324229, -0.01844559, 0.0),
    27: (2.752869, 0.02729201, 0.4996927, 0.2496551, 0.0),
    28: (3.518506, 1.11244, -0.4556216, -0.2179426, 0.0),
    29: (162.6062, -11.68838, -5.498343, 0.0, 0.0),
    30: (0.3336833, -0.1458043, -0.02011751, 0.0, 0.0),
    31: (74.25137, 17.90236, 30.3391, 10.18259, 0.0),
    32: (926.8325, -97.39859, -77.02152, -31.58268, 0.0),
    33: (2.474401, 0.3892972, 0.0, 0.0, 0.0),
    34: (11.27018, 1.622158, -1.443664, -0.9474699, 0.0),
    36: (0.1445216, -0.06180219, 0.03093878, 0.0156709, 0.0),
    37: (1.304129, 0.1395919, 0.004142455, -0.009732503, 0.0),
    38: (0.5114149, -0.0116085, 0.0, 0.0, 0.0),
    39: (131.4955, 20.09258, -0.5143082, -1.37914, 0.0),
    40: (18.23973, -3.074559, -4.307878, 0.0, 0.0),
    41: (2.327037, 2.403445, 1.208407, 0.2087263, 0.0),
    42: (1.997378, -0.8126205, 0.0, 0.0, 0.0),
    43: (0.1079113, 0.01762409, 0.01096601, 0.003058818, 0.0),
    44: (2.327409, 0.6901582, -0.2158431, -0.1084117, 0.0),
    46: (2.214315, -1.975747, 0.0, 0.0, 0.0),
    48: (5.072525, 11.46189, 6.961724, 1.316965, 0.0),
    49: (5.13974, 0.0, 0.0, 0.0, 0.0),
    51: (1.125124, 1.306486, 3.622359, 2.601976, 0.303127),
    52: (0.3349489, 0.004531269, 0.1131793, 0.2300156, 0.07632745),
    53: (1.467794, 2.798142, 9.45558, 8.963904, 3.339719),
    54: (0.4658512, 0.2597451, 0.9048179, 0.7394505, 0.1607092),
    55: (1.0422, 0.13156, 0.045, 0.0, 0.0),
    56: (1.110866, 0.9623856, 2.735487, 2.445602, 0.8826352),
    57: (-0.1584333, -0.1728865, -0.4461431, -0.3925259, -0.1276203),
}

# Rows with an additional zeta^5 term (formulae.md section 2.2).
_B_ZETA5 = {4: 0.1231572, 6: 0.01640687, 51: -0.1343798, 53: 0.4426929, 56: 0.1140142, 57: -0.01308728}


def _poly(row, zt):
    al, be, ga, et, mu = row
    return al + zt * (be + zt * (ga + zt * (et + zt * mu)))


def _critical_scalar(z: float) -> tuple[float, float, float]:
    zt = np.log10(z / 0.02)
    m_hook = 1.0185 + zt * (0.16015 + zt * 0.0892)  # eq (1)
    m_hef = 1.995 + zt * (0.25 + zt * 0.087)  # eq (2)
    # eq (3) in the paper's form; the SSE code writes 16.5 Z^0.06 / (1 + (1e-4/Z)^1.27), whose
    # unrounded constants give values higher by 1e-5 (Z = 0.02) to 0.17 % (Z = 1e-4).
    m_fgb = 13.048 * (z / 0.02) ** 0.06 / (1.0 + 0.0012 * (0.02 / z) ** 1.27)
    return m_hook, m_hef, m_fgb


def _alpha_r(m, a):
    """alpha_R of the MS radius evolution in the range where it is a rational function of M."""
    return a[58] * m ** a[60] / (a[59] + m ** a[61])


@lru_cache(maxsize=512)
def _build(z: float):
    zt = float(np.log10(z / 0.02))
    sig = float(np.log10(z))
    rho = zt + 1.0
    a = np.full(N_A + 1, np.nan)
    b = np.full(N_B + 1, np.nan)
    for n, row in _A_ROWS.items():
        a[n] = _poly(row, zt)
    for n, row in _B_ROWS.items():
        b[n] = _poly(row, zt)
    for n, c5 in _B_ZETA5.items():
        b[n] += c5 * zt**5
    m_hook, m_hef, m_fgb = _critical_scalar(z)

    # --- a_n special cases (formulae.md section 2.2, SSE forms) ---
    a[11] *= a[14]
    a[12] *= a[14]
    a[17] = 10.0 ** max(0.097 - 0.1072 * (sig + 3.0), max(0.097, min(0.1461, 0.1461 + 0.1237 * (sig + 2.0))))
    a[18] *= a[20]
    a[19] *= a[20]
    a[29] = a[29] ** a[32]
    a[33] = min(1.4, 1.5135 + 0.3769 * zt)
    a[33] = max(0.6355 - 0.4192 * zt, max(1.25, a[33]))
    a[42] = min(1.25, max(1.1, a[42]))
    a[44] = min(1.3, max(0.45, a[44]))
    a[49] = max(a[49], 0.145)
    a[50] = min(a[50], 0.306 + 0.053 * zt)
    a[51] = min(a[51], 0.3625 + 0.062 * zt)
    a[52] = max(a[52], 0.9)
    a[53] = max(a[53], 1.0)
    if z > 0.01:
        a[52] = min(a[52], 1.0)
        a[53] = min(a[53], 1.1)
    a[57] = min(1.4, a[57])
    a[57] = max(0.6355 - 0.4192 * zt, max(1.25, a[57]))
    a[62] = max(0.065, a[62])
    if z < 0.004:
        a[63] = min(0.055, a[63])
    a[64] = max(0.091, min(0.121, a[64]))
    a[66] = max(a[66], min(1.6, -0.308 - 1.046 * zt))
    a[66] = max(0.8, min(0.8 - 2.0 * zt, a[66]))
    a[68] = max(0.9, min(a[68], 1.0))
    if a[68] > a[66]:
        a[64] = _alpha_r(a[66], a)
        a[68] = a[66]
    if z > 0.01:
        a[72] = max(a[72], 0.95)
    a[74] = max(1.4, min(a[74], 1.6))
    a[75] = max(1.0, min(a[75], 1.27))
    a[75] = max(a[75], 0.6355 - 0.4192 * zt)
    a[76] = max(a[76], -0.1015564 - 0.2161264 * zt - 0.05182516 * zt**2)
    a[77] = max(-0.3868776 - 0.5457078 * zt - 0.1463472 * zt**2, min(0.0, a[77]))
    a[78] = max(0.0, min(a[78], 7.454 + 9.046 * zt))
    a[79] = min(a[79], max(2.0, -13.3 - 18.6 * zt))
    a[80] = max(0.0585542, a[80])
    a[81] = min(1.5, max(0.4, a[81]))

    # --- b_n special cases ---
    b[1] = min(0.54, b[1])
    b2 = 10.0 ** (-4.6739 - 0.9394 * sig)
    b[2] = min(max(b2, -0.04167 + 55.67 * z), 0.4771 - 9329.21 * z**2.94)
    b[3] = 10.0 ** max(-0.1451, -2.2794 - 1.5175 * sig - 0.254 * sig**2)
    if z > 0.004:
        b[3] = max(b[3], 0.7307 + 14265.1 * z**3.395)
    b[11] = b[11] ** 2
    b[13] = b[13] ** 2
    b[14] = b[14] ** b[15]
    b[16] = b[16] ** b[15]
    b17 = 1.0 - 0.3880523 * rho**0.637176 if zt > -1.0 else 1.0
    # SSE renormalises b17 at M_FGB (continuity of the CHeB minimum luminosity).
    b[17] = b17 / m_fgb**0.1 + (b17 * b[16] - b[14]) / m_fgb ** (b[15] + 0.1)
    b[24] = b[24] ** b[28]
    b[26] = 5.0 - 0.09138012 * z**-0.3671407
    b[27] = b[27] ** (2.0 * b[28])
    b[31] = b[31] ** b[33]
    b[34] = b[34] ** b[33]
    b[36] = b[36] ** 4
    b[37] = 4.0 * b[37]
    b[38] = b[38] ** 4
    b[40] = max(b[40], 1.0)
    b[41] = b[41] ** b[42]
    b[44] = b[44] ** 5
    b[45] = 1.0 - (2.47162 * rho - 5.401682 * rho**2 + 3.247361 * rho**3) if rho > 0 else 1.0
    b[46] = -b[46] * np.log10(m_hef / m_fgb)
    b[47] = 1.127733 * rho + 0.2344416 * rho**2 - 0.3793726 * rho**3
    b[55] = min(0.99164 - 743.123 * z**2.83, b[55])

    # L_HeI continuity constant alpha_1 (eq 49): low-mass branch meets the high-mass one at M_HeF.
    l_hef = (b[11] + b[12] * m_hef**3.8) / (b[13] + m_hef**2)
    alpha1 = (b[9] * m_hef ** b[10] - l_hef) / l_hef

    # Main-sequence lifetime factor x (eq 6), SSE linear-in-Z form.
    x_ms = max(0.95, max(0.95 - (10.0 / 3.0) * (z - 0.01), min(0.99, 0.98 - (100.0 / 7.0) * (z - 0.001))))

    a.setflags(write=False)
    b.setflags(write=False)
    return a, b, m_hook, m_hef, m_fgb, alpha1, x_ms


@dataclass(frozen=True)
class Coefficients:
    """HPT2000 constants for one Z or an array of Z.

    ``a[n]`` and ``b[n]`` (n as in the paper; index 0 and unused rows are NaN) have the shape of
    ``z``, so they broadcast against a mass array of the same or a compatible shape.

    Attributes
    ----------
    z, zeta : ndarray
        Metallicity and log10(Z/0.02).
    a, b : ndarray, shapes ``(82,) + z.shape`` and ``(58,) + z.shape``
        The constants after the special cases.
    m_hook, m_hef, m_fgb : ndarray
        Critical masses of eqs (1)-(3) (Msun).
    alpha1 : ndarray
        Continuity constant of the low-mass L_HeI branch (eq 49).
    x_ms : ndarray
        Factor x of eq (6), t_MS >= x t_BGB.
    """

    z: np.ndarray
    zeta: np.ndarray
    a: np.ndarray
    b: np.ndarray
    m_hook: np.ndarray
    m_hef: np.ndarray
    m_fgb: np.ndarray
    alpha1: np.ndarray
    x_ms: np.ndarray


def coefficients(z=0.02) -> Coefficients:
    """The a_n, b_n constants of HPT2000 for metallicity ``z``, after the special cases.

    Parameters
    ----------
    z : array_like
        Metal mass fraction (Z_sun = 0.02 scale), 1e-4..0.03; ``ValueError`` outside.

    Returns
    -------
    Coefficients
        Arrays broadcast over the shape of ``z``. Built once per distinct Z value (cached).
    """
    z = check_z(z)
    if z.ndim == 0:
        a, b, mh, mf, mg, al, x = _build(float(z))
        return Coefficients(z, np.log10(z / 0.02), a, b, np.float64(mh), np.float64(mf),
                            np.float64(mg), np.float64(al), np.float64(x))
    uniq, inverse = np.unique(z, return_inverse=True)
    parts = [_build(float(u)) for u in uniq]
    inverse = inverse.reshape(z.shape)

    def gather(i):
        return np.array([p[i] for p in parts])[inverse]

    a = np.stack([p[0] for p in parts], axis=-1)[:, inverse]
    b = np.stack([p[1] for p in parts], axis=-1)[:, inverse]
    return Coefficients(z, np.log10(z / 0.02), a, b, gather(2), gather(3), gather(4), gather(5), gather(6))


def critical_masses(z=0.02) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Critical masses of HPT2000 eqs (1)-(3) (Msun), broadcast over ``z``.

    Returns
    -------
    m_hook : ndarray
        Lowest initial mass with a main-sequence hook (convective core), eq (1).
    m_hef : ndarray
        Highest initial mass igniting helium degenerately (helium flash), eq (2).
    m_fgb : ndarray
        Highest initial mass igniting helium on the first giant branch, eq (3); above it helium
        ignites in the Hertzsprung gap.
    """
    c = coefficients(z)
    return c.m_hook, c.m_hef, c.m_fgb
