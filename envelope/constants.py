"""Physical constants used across envelope (SI), defined once.

References
----------
[1] CODATA 2018 recommended values (via ``scipy.constants``).
"""

from __future__ import annotations

from scipy import constants as _sc

__all__ = ["SIGMA", "T0_K", "R_V_J_KGK", "P_ATM_PA", "Z95"]

SIGMA: float = float(_sc.Stefan_Boltzmann)
"""Stefan–Boltzmann constant [W m-2 K-4], 2π⁵k⁴/(15h³c²) from the exact constants of the
2019 SI (CODATA 2018 prints it rounded to 5.670374419e-8)."""

T0_K: float = float(_sc.zero_Celsius)
"""0 °C in kelvin [K] (273.15, exact by definition)."""

R_V_J_KGK: float = 461.5
"""Specific gas constant of water vapour [J kg-1 K-1] (ISO 13788:2012, Annex E)."""

P_ATM_PA: float = float(_sc.atm)
"""Standard atmosphere [Pa] (101325, exact)."""

Z95: float = 1.959963984540054
"""Coverage factor of a two-sided 95 % interval of a normal distribution (JCGM 100:2008, G.3)."""
