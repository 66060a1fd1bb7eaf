"""The builder's check: a measured U against its specification, using the uncertainty."""

from __future__ import annotations

import numpy as np

__all__ = ["builder_verdict"]

_RESOLVE = ("a larger indoor-outdoor temperature difference on a repeat night, a contact-"
            "probe reference spot to calibrate the surface temperatures, or a longer time "
            "series (ISO 9869-1 average method) would narrow the interval")


def builder_verdict(u_low95: float, u_high95: float, u_specified: float,
                    tolerance: float = 0.0, checks_ok: bool = True,
                    remedy: str | None = None) -> tuple[str, str]:
    """Pass / fail / inconclusive verdict of a measured U against its specification.

    Parameters
    ----------
    u_low95, u_high95 : float
        Bounds of the 95 % interval of the measured U [W m-2 K-1].
    u_specified : float
        Specified (design) U [W m-2 K-1].
    tolerance : float
        Allowance added to the specification [W m-2 K-1], >= 0.
    checks_ok : bool
        False when a survey validity check failed.
    remedy : str, optional
        What would narrow this interval (the largest share of its variance and the input
        that removes it, `envelope.budget.narrowing_advice`); a generic list when absent.

    Returns
    -------
    (verdict, reason)
        verdict in {"pass", "fail", "inconclusive"}.

    Notes
    -----
    With ``limit = u_specified + tolerance``: pass when ``u_high95 <= limit`` (the whole
    interval meets it; equality passes), fail when ``u_low95 > limit`` (the whole interval
    is above), otherwise inconclusive (straddling, including ``u_low95 == limit``). A
    failed survey check downgrades a pass to inconclusive; a fail stays a fail but its
    reason says the night was not fully valid.
    """
    resolve = f"to narrow the interval, {remedy}" if remedy else _RESOLVE
    if u_specified is None or not np.isfinite(u_specified) or u_specified <= 0:
        raise ValueError(f"u_specified must be > 0, got {u_specified!r}")
    if tolerance is None or not np.isfinite(tolerance) or tolerance < 0:
        raise ValueError(f"tolerance must be >= 0, got {tolerance!r}")
    limit = float(u_specified) + float(tolerance)
    lim_txt = f"{limit:.2f} W/(m²·K)" + (f" (specified {u_specified:.2f} + tolerance "
                                         f"{tolerance:.2f})" if tolerance else "")
    if u_low95 is None or u_high95 is None or not (np.isfinite(u_low95)
                                                    and np.isfinite(u_high95)):
        return "inconclusive", f"no measured U interval for this element; {resolve}."
    if u_low95 > u_high95:
        raise ValueError(f"u_low95 {u_low95} is above u_high95 {u_high95}")
    iv = (f"measured 95 % interval {max(u_low95, 0.0):.2f} to {u_high95:.2f} W/(m²·K)"
          if u_low95 >= 0 else f"measured 95 % interval up to {u_high95:.2f} W/(m²·K)")
    if u_high95 <= limit:
        if not checks_ok:
            return ("inconclusive", f"{iv} is within the limit {lim_txt}, but a survey "
                    "validity check failed, so the evidence does not support a pass; "
                    "repeat on a night that meets the checks.")
        return "pass", f"{iv} lies wholly at or below the limit {lim_txt}."
    if u_low95 > limit:
        note = "" if checks_ok else (" A survey validity check failed: confirm before "
                                     "remedial work.")
        return "fail", f"{iv} lies wholly above the limit {lim_txt}.{note}"
    note = "" if checks_ok else " A survey validity check also failed."
    return ("inconclusive", f"{iv} is not wholly on one side of the limit {lim_txt}; {resolve}.{note}")
