"""Physical constants (exact SI-2019 / CODATA 2018 values) and kT·ln10.

Every constant here is exact by definition of the SI since 2019, so no
uncertainty is carried.

References
----------
CODATA 2018 recommended values (Tiesinga et al., Rev. Mod. Phys. 2021, 93:025010,
doi:10.1103/RevModPhys.93.025010); the exact values are those fixed by the 26th CGPM
(2018). See ``reference/REFERENCES.md`` section 5.
"""

from __future__ import annotations

import math

from fescan.core.errors import ConfigError

__all__ = [
    "BOLTZMANN_J_PER_K",
    "ELEMENTARY_CHARGE_C",
    "AVOGADRO_PER_MOL",
    "FARADAY_C_PER_MOL",
    "GAS_CONSTANT_J_PER_MOL_K",
    "BOLTZMANN_EV_PER_K",
    "DEFAULT_TEMPERATURE_K",
    "kt_ln10_ev",
]

#: Boltzmann constant k_B in J K⁻¹ (exact).
BOLTZMANN_J_PER_K: float = 1.380649e-23
#: Elementary charge e in C (exact).
ELEMENTARY_CHARGE_C: float = 1.602176634e-19
#: Avogadro constant N_A in mol⁻¹ (exact).
AVOGADRO_PER_MOL: float = 6.02214076e23
#: Faraday constant F = N_A·e in C mol⁻¹ (exact; 96 485.332 12... C mol⁻¹).
FARADAY_C_PER_MOL: float = AVOGADRO_PER_MOL * ELEMENTARY_CHARGE_C
#: Molar gas constant R = N_A·k_B in J mol⁻¹ K⁻¹ (exact; 8.314 462 618... ).
GAS_CONSTANT_J_PER_MOL_K: float = AVOGADRO_PER_MOL * BOLTZMANN_J_PER_K
#: Boltzmann constant in eV K⁻¹ (k_B / e; 8.617 333 262...e-5).
BOLTZMANN_EV_PER_K: float = BOLTZMANN_J_PER_K / ELEMENTARY_CHARGE_C
#: Default temperature, 25 °C, in K.
DEFAULT_TEMPERATURE_K: float = 298.15


def kt_ln10_ev(temperature: float = DEFAULT_TEMPERATURE_K) -> float:
    """Return k_B·T·ln 10 in eV, the free energy of one decade of rate.

    Parameters
    ----------
    temperature : float, optional
        Absolute temperature in K (default 298.15 K). Must be finite and > 0.

    Returns
    -------
    float
        k_B·T·ln(10) in eV (0.059 16 eV at 298.15 K).

    Raises
    ------
    fescan.core.errors.ConfigError
        If the temperature is not a finite positive number.

    Examples
    --------
    >>> round(kt_ln10_ev(298.15), 5)
    0.05916
    >>> round(kt_ln10_ev(310.15), 5)
    0.06154
    """
    try:
        t = float(temperature)
    except (TypeError, ValueError):
        raise ConfigError(f"temperature must be a number in K; got {temperature!r}") from None
    if not math.isfinite(t) or t <= 0.0:
        raise ConfigError(f"temperature must be a finite number above 0 K; got {temperature!r}")
    return BOLTZMANN_EV_PER_K * t * math.log(10.0)
