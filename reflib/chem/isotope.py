"""Isotope shifts of bond stretches by the harmonic (and, optionally, Morse) oscillator.

A diatomic stretch has wavenumber ``nu = (1 / 2 pi c) sqrt(k / mu)``; the force constant ``k``
does not change on isotopic substitution, so ``nu_heavy / nu_light = sqrt(mu_light / mu_heavy)``.
An X-H stretch treated as an X-H oscillator gives a fair first estimate of the X-D stretch.

Observed X-D fundamentals sit somewhat *higher* than this harmonic prediction because the bond is
anharmonic: for a Morse oscillator the fundamental is ``omega_e - 2 omega_e x_e``, where
``omega_e`` scales as ``mu**-1/2`` and ``omega_e x_e`` as ``mu**-1``. Given the anharmonicity
constant of the light bond, :func:`isotope_shift` applies that correction.

Atomic masses (amu) are the usual rounded standard values.
"""

from __future__ import annotations

import math

from reflib.errors import ValidationError

#: Atomic masses in amu (rounded standard values; deuterium is the isotope mass).
MASSES: dict[str, float] = {
    "H": 1.008,
    "D": 2.014,
    "C": 12.000,
    "N": 14.007,
    "O": 15.999,
}

#: Typical anharmonicity constants omega_e x_e (cm-1) of X-H bonds, from memory (diatomic CH, NH
#: and OH radicals are near 64, 78 and 85 cm-1); used only to bound derived X-D ranges from above.
ANHARMONICITY_CM1: dict[str, float] = {"C": 60.0, "N": 78.0, "O": 85.0}


def reduced_mass(m1: float, m2: float) -> float:
    """Reduced mass ``m1 m2 / (m1 + m2)`` of two atoms, in amu.

    >>> round(reduced_mass(12.0, 1.008), 5)
    0.92989
    """
    if not (m1 > 0 and m2 > 0) or not (math.isfinite(m1) and math.isfinite(m2)):
        raise ValidationError(f"atomic masses must be positive finite amu, got {m1!r} and {m2!r}")
    return m1 * m2 / (m1 + m2)


def isotope_shift(
    nu_cm1: float,
    light: tuple[float, float] = (MASSES["C"], MASSES["H"]),
    heavy: tuple[float, float] = (MASSES["C"], MASSES["D"]),
    *,
    anharmonicity_cm1: float = 0.0,
) -> float:
    """Predicted wavenumber (cm-1) of a stretch after isotopic substitution.

    Parameters
    ----------
    nu_cm1:
        Observed wavenumber of the light isotopologue's stretch, cm-1.
    light, heavy:
        Atomic masses (amu) of the two atoms of the bond, before and after substitution.
    anharmonicity_cm1:
        ``omega_e x_e`` of the light bond in cm-1. 0 (the default) gives the plain harmonic
        prediction ``nu * sqrt(mu_light / mu_heavy)``; a positive value gives the Morse-oscillator
        fundamental, which is higher by ``2 x (rho - rho**2)`` where ``rho`` is that ratio.

    Example
    -------
    A C-H stretch at 3020 cm-1 predicts a C-D stretch near 2218 cm-1:

    >>> round(isotope_shift(3020.0))
    2218
    """
    if not (nu_cm1 > 0 and math.isfinite(nu_cm1)):
        raise ValidationError(f"a stretch wavenumber must be positive cm-1, got {nu_cm1!r}")
    if anharmonicity_cm1 < 0 or not math.isfinite(anharmonicity_cm1):
        raise ValidationError(
            f"anharmonicity must be a non-negative cm-1 value, got {anharmonicity_cm1!r}"
        )
    rho = math.sqrt(reduced_mass(*light) / reduced_mass(*heavy))
    x = anharmonicity_cm1
    # nu_light = w - 2x and nu_heavy = rho w - 2 rho**2 x, so
    # nu_heavy = rho nu_light + 2x (rho - rho**2)
    return rho * nu_cm1 + 2.0 * x * (rho - rho * rho)


def deuterium_shift(nu_xh: float, x: str = "C", *, anharmonic: bool = False) -> float:
    """Predicted X-D stretch (cm-1) from an X-H stretch, X one of ``'C'``, ``'N'``, ``'O'``.

    With ``anharmonic=True`` the typical anharmonicity of :data:`ANHARMONICITY_CM1` is applied.

    >>> round(deuterium_shift(3650.0, "O"))
    2657
    """
    if x not in ANHARMONICITY_CM1:
        raise ValidationError(f"x must be one of C, N, O; got {x!r}")
    m = MASSES[x]
    return isotope_shift(
        nu_xh,
        light=(m, MASSES["H"]),
        heavy=(m, MASSES["D"]),
        anharmonicity_cm1=ANHARMONICITY_CM1[x] if anharmonic else 0.0,
    )


def deuterated_range(lo_cm1: float, hi_cm1: float, x: str = "C") -> tuple[float, float]:
    """The X-D range (cm-1) implied by an X-H range: harmonic prediction of the lower edge,
    anharmonic (Morse) prediction of the upper edge, so the range brackets both models.

    >>> [round(v) for v in deuterated_range(2840.0, 3100.0, "C")]
    [2085, 2300]
    """
    if not lo_cm1 < hi_cm1:
        raise ValidationError(f"range must have lo < hi, got {lo_cm1!r}-{hi_cm1!r} cm-1")
    return deuterium_shift(lo_cm1, x), deuterium_shift(hi_cm1, x, anharmonic=True)
