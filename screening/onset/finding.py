"""The finding of an onset investigation in plain words.

Which estimate speaks (in this order): a ramp in the flow-normalised suction condition where
the broken stick fits better than a step (a steady decline: its slope per month, its start
and the 5-95 % interval of the start); a step in that condition; a step in the margin itself
(a change the normalisation explains, such as a hotter liquid); a step in the daily hours
below the guidance. Then the input that carried most of the loss after the onset, the number
of episodes and the exposure before a failure.
"""

from __future__ import annotations

import pandas as pd

from screening.inputs.units import si_to

#: Days in a mean Gregorian month (365.2425 / 12), for slopes per month.
DAYS_PER_MONTH = 30.436875


def day_text(ts) -> str:
    """A date in words, e.g. 15 June 2026."""
    ts = pd.Timestamp(ts)
    return f"{ts.day} {ts:%B %Y}"


def span_text(interval) -> str:
    """A 5-95 % interval of dates in words, e.g. '5-95 % between 2 and 28 June 2026'."""
    lo, hi = (pd.Timestamp(x) for x in interval)
    if lo == hi:
        return "5-95 % interval within that day"
    if (lo.year, lo.month) == (hi.year, hi.month):
        first = str(lo.day)
    elif lo.year == hi.year:
        first = f"{lo.day} {lo:%B}"
    else:
        first = day_text(lo)
    return f"5-95 % between {first} and {day_text(hi)}"


def length_text(metres: float, unit: str = "m", sign: bool = False) -> str:
    """A length [m] as text in ``unit`` (``m`` or ``ft``) to two decimals, e.g. ``1.67 m``;
    with ``sign`` always signed (``-2.60 m``)."""
    value = float(si_to(metres, unit, "length"))
    return f"{value:+.2f} {unit}" if sign else f"{value:.2f} {unit}"


def _opening(pump_id: str, found: dict, unit: str = "m") -> tuple[str, pd.Timestamp | None]:
    """The first sentence and the onset date it speaks of (lengths in ``unit``)."""
    ramp, step, margin, exposure = (found[k] for k in ("ramp", "step", "margin", "exposure"))
    if ramp.get("chosen"):
        per_month = -ramp["slope"] * DAYS_PER_MONTH
        text = (
            f"{pump_id}: a steady decline of the suction condition of "
            f"{length_text(per_month, unit)} per month from about {day_text(ramp['onset'])}"
        )
        return text + (f" ({span_text(ramp['interval'])})" if ramp.get("interval") else ""), ramp[
            "onset"
        ]
    for res, what in ((step, "the suction condition"), (margin, "the NPSH margin")):
        if res.get("onset") is not None:
            size = res["mean_before"] - res["mean_after"]
            verb = "fell" if size > 0 else "rose"
            text = (
                f"{pump_id}: {what} {verb} by {length_text(abs(size), unit)} from about "
                f"{day_text(res['onset'])}"
            )
            return text + (f" ({span_text(res['interval'])})" if res.get("interval") else ""), res[
                "onset"
            ]
    if exposure.get("onset") is not None:
        text = (
            f"{pump_id}: the hours below the guidance went from {exposure['mean_before']:.1f} to "
            f"{exposure['mean_after']:.1f} a day from about {day_text(exposure['onset'])}"
        )
        return text, exposure["onset"]
    return f"{pump_id}: no lasting change in suction margin found in the window", None


def plain_finding(
    pump_id: str,
    found: dict,
    drivers: pd.DataFrame,
    eps: pd.DataFrame,
    before,
    length_unit: str = "m",
) -> str:
    """The finding in words.

    Parameters
    ----------
    pump_id : str
    found : dict
        The estimates by name: ``step``, ``ramp`` (flow-normalised suction condition [m]),
        ``margin`` (margin change [m]) and ``exposure`` (hours below guidance [h/day]).
    drivers : DataFrame
        Daily driver shares [m] on the days the onset was sought in (``date`` local).
    eps : DataFrame
        The episodes below the guidance.
    before : DataFrame or None
        Exposure before the failure (:func:`screening.onset.episodes.exposure_before`).
    length_unit : str
        Unit of the lengths in the text: ``m`` (the default) or ``ft``.
    """
    text, when = _opening(pump_id, found, length_unit)
    if when is not None and len(drivers):
        dates = pd.to_datetime(drivers["date"]).dt.tz_localize(None)
        late = drivers[dates >= pd.Timestamp(when)]
        late = late if len(late) else drivers.tail(1)
        names = [c[:-2] for c in drivers.columns
                 if c.endswith("_m") and c not in ("change_m", "interaction_m")]  # fmt: skip
        shares = {k: float(late[f"{k}_m"].mean()) for k in names}
        worst = min(shares, key=shares.get)
        if shares[worst] < 0:
            text += (
                f", mostly from {worst.replace('_', ' ')} "
                f"({length_text(shares[worst], length_unit, sign=True)} on average since then)"
            )
    text += f"; {len(eps)} episode(s) below the guidance"
    if before is not None and len(before):
        # the longest span the data cover (NaN where a span reaches outside the window)
        covered = before.dropna(subset=["below_guidance_h"])
        if len(covered):
            row = covered.iloc[-1]
            text += (
                f"; {row['below_guidance_h']:.1f} h below guidance in the "
                f"{int(row['span_days'])} days before the failure"
            )
    return text + "."
