"""What an uncertainty budget is used for: advice, defects, and H over shared draws.

- :func:`narrowing_advice` turns a variance budget into "what would narrow this interval":
  the largest contributors and the input that removes each (:data:`REMEDIES`);
- :func:`defect_relative_uncertainty` gives the relative uncertainty of a defect's extra heat
  flow, measured against its own image's reference zone;
- :func:`heat_loss_from_draws` sums A U and L psi trial by trial over Monte Carlo draws that
  share their inputs (:func:`envelope.uncertainty.estimate_u` with ``keep_draws=True`` and one
  seed), so elements that share thermometers, camera and convection error are not added as
  if independent.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

__all__ = [
    "H_C_REL_STD",
    "Advice",
    "REMEDIES",
    "narrowing_advice",
    "defect_relative_uncertainty",
    "HeatLossResult",
    "heat_loss_from_draws",
    "interval95",
    "FLOOR_NOTE",
]


def interval95(draws, floor: float = 0.0) -> tuple[float, float, bool]:
    """Probabilistically symmetric 95 % interval of Monte Carlo draws (JCGM 101:2008 §7.7),
    its lower end raised to a physical ``floor`` when it falls below it.

    U of an element losing heat and H of a heated house cannot be negative. Raising the lower
    end to 0 removes only values the truth cannot take, so the probability that the interval
    holds the truth is unchanged. Returns (low, high, raised).

    >>> interval95(np.linspace(-1.0, 3.0, 4001))
    (0.0, 2.9, True)
    """
    lo, hi = (float(x) for x in np.quantile(np.asarray(draws, float), [0.025, 0.975]))
    raised = lo < floor
    return (float(floor) if raised else lo), hi, raised


#: Note for an interval whose lower end was raised to zero.
FLOOR_NOTE = ("the 95 % interval reached below zero, which a heat loss cannot: its lower end is "
              "given as 0 and the survey does not resolve this value from zero")


@dataclass(frozen=True)
class Advice:
    """One line of "what would narrow this interval": contributor, its variance share, remedy."""

    contributor: str
    share: float
    remedy: str


# ----------------------------------------------------------------------------- H
@dataclass(frozen=True)
class HeatLossResult:
    """Heat-loss coefficient H [W/K] from joint draws, and the independent-sum comparison."""

    h_w_k: float
    h_std_w_k: float
    h_low95_w_k: float
    h_high95_w_k: float
    h_std_independent_w_k: float
    n_valid: int
    low_raised_to_zero: bool = False


def heat_loss_from_draws(elements: Sequence[tuple[float, np.ndarray]],
                         bridges: Sequence[tuple[float, np.ndarray]] = ()) -> HeatLossResult:
    """H = sum A_i U_i + sum L_j psi_j summed trial by trial over shared draws.

    Parameters
    ----------
    elements : sequence of (area_m2, u_draws)
        Net area [m2] and per-trial U [W m-2 K-1] of each element (``UResult.draws`` from
        calls with the same seed and n_draws, so trial k holds the same shared inputs).
    bridges : sequence of (length_m, psi_draws)
        Length [m] and per-trial psi [W m-1 K-1] (or (1, chi_draws) for a point bridge).

    Returns
    -------
    HeatLossResult

    Notes
    -----
    Trials where any term is NaN are dropped jointly. ``h_std_independent_w_k`` is
    sqrt(sum of the terms' variances): what an independent sum would claim. The interval's
    lower end is raised to 0 when it falls below (:func:`interval95`).
    """
    terms = [float(a) * np.asarray(d, dtype=float).ravel() for a, d in (*elements, *bridges)]
    if not terms:
        raise ValueError("heat_loss_from_draws needs at least one element")
    if len({t.size for t in terms}) != 1:
        raise ValueError("all draws must have the same length (same n_draws)")
    stack = np.stack(terms)
    ok = np.all(np.isfinite(stack), axis=0)
    if ok.sum() < 2:
        raise ValueError("fewer than two trials are finite in every term")
    h = stack[:, ok].sum(axis=0)
    lo, hi, raised = interval95(h)
    indep = math.sqrt(float(np.sum(np.var(stack[:, ok], axis=1, ddof=1))))
    return HeatLossResult(float(np.mean(h)), float(np.std(h, ddof=1)), lo, hi,
                          indep, int(ok.sum()), raised)


# ----------------------------------------------------------------------------- advice
#: What removes each contributor (our wording; the inputs the survey format can take).
REMEDIES = {
    "camera_offset": "camera offset: add a contact-probe spot (calibrated, ≤ 0.1 K) in the view",
    "reflected": "reflected temperature: measure it with a crumpled-foil reflector read by the "
                 "same camera",
    "mrt": "mean radiant temperature: measure it with a globe thermometer or several reflector "
           "readings around the room",
    "h_c": "convection: add a heat-flux-meter spot on the element",
    "t_ai": "air temperature difference: survey on a colder night (or use a calibrated, "
            "radiation-shielded indoor thermometer)",
    "t_ae": "air temperature difference: survey on a colder night (or use a calibrated, "
            "radiation-shielded outdoor thermometer)",
    "emissivity": "emissivity: stick an emissivity tape beside the zone where it contrasts with "
                  "the reflected temperature",
    "tape": "tape emissivity: use a tape with a certified emissivity, or read it where it "
            "contrasts more with the reflected temperature",
    "probe": "probe: use a calibrated contact probe (≤ 0.1 K) with contact paste",
    "camera_relative": "camera relative accuracy: survey on a colder night (a larger surface–air "
                       "difference) or add a heat-flux-meter spot",
    "camera_noise": "camera noise: record a series of frames (≥ 20) and average",
    "air_noise": "air-temperature fluctuation: record a series (≥ 20 frames) with logged air "
                 "temperatures",
    "flux": "heat-flux meter: average it longer, mount it after ISO 9869-1",
    "transmittance": "transmittance: shoot closer, or state the path's humidity and distance",
    "wind": "wind: assess this element from inside instead",
    "t_sky": "sky temperature: assess this element from inside, or measure the sky with a "
             "pyrgeometer",
}


def narrowing_advice(budget: dict, *, delta_t_k: float | None = None, limit: int = 3,
                     min_share: float = 0.05) -> tuple[Advice, ...]:
    """What would narrow the interval: the largest contributors and the input that removes them.

    Parameters
    ----------
    budget : dict
        {input group: share of the variance} (``UResult.budget``).
    delta_t_k : float, optional
        Indoor–outdoor air difference [K]; below 15 K the advice to survey on a colder night
        is added to the first line (every temperature error shrinks relative to U with it).
    limit : int
        At most this many lines.
    min_share : float
        Contributors below this share are left out.

    Returns
    -------
    tuple of Advice
        Largest share first.
    """
    out = []
    for name, share in sorted(budget.items(), key=lambda kv: -kv[1])[:limit]:
        if share < min_share:
            break
        remedy = REMEDIES.get(name, f"{name}: reduce its uncertainty")
        if delta_t_k is not None and delta_t_k < 15.0 and not out and "colder night" not in remedy:
            remedy += f"; the indoor–outdoor difference is only {delta_t_k:.1f} K: survey on a " \
                      "colder night"
        out.append(Advice(name, float(share), remedy))
    return tuple(out)


#: Default relative standard uncertainty of a film coefficient: a ±20 % rectangular band.
H_C_REL_STD = 0.2 / math.sqrt(3.0)


def defect_relative_uncertainty(surface_air_k, relative_accuracy_k, h_c_rel_std=H_C_REL_STD):
    """Relative standard uncertainty of a defect's extra heat flow [-].

    Parameters
    ----------
    surface_air_k : float
        |T_air - T_s| of the element's reference zone [K] (interior: indoor air).
    relative_accuracy_k : float
        Camera relative accuracy (± limit, rectangular) [K].
    h_c_rel_std : float
        Relative standard uncertainty of the film coefficient [-] (e.g. the convection
        ensemble's std / mean; default a ±20 % rectangular band).

    Notes
    -----
    The extra heat flow is measured against the reference zone of the same image, so the
    camera's absolute offset cancels; what is left is the film coefficient and the camera's
    relative accuracy on the contrast, taken conservatively against the reference zone's
    surface–air difference (sqrt(2) relative_accuracy / sqrt(3) for a difference of two
    rectangular readings; the difference floored at 0.5 K):
    u_rel = sqrt(h_c_rel_std^2 + (u_T / max(dT, 0.5))^2).
    """
    if relative_accuracy_k < 0 or h_c_rel_std < 0:
        raise ValueError("relative_accuracy_k and h_c_rel_std must be >= 0")
    u_t = math.sqrt(2.0) * relative_accuracy_k / math.sqrt(3.0)
    return math.sqrt(h_c_rel_std**2 + (u_t / max(abs(float(surface_air_k)), 0.5)) ** 2)
