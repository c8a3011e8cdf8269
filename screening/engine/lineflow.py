"""Running or stopped, and the total flow of a shared suction line, on each piece of a pump's
timeline.

A pump on a shared suction line (register ``suction_line_id``, see
:mod:`screening.inputs.lines`) loses head in the line at the line's total flow, not its own:
two equal pumps running together on one header lose 4·k·Q² each instead of k·Q²
(h = k·Q², Darcy–Weisbach at a constant friction factor; Karassik et al., *Pump Handbook*,
4th ed., §2.3). The line's flow on each piece is

* the header flow tag (a flow transmitter on the common line) where its sample is fresh and
  good;
* else the sum over the line's members of each member's flow while it runs and 0 while it is
  stopped, each member decided running or stopped by the same rule as the pump itself (its run
  status, else its flow and speed against fractions of BEP flow and rated speed).

Where neither is known (the header stale or bad, and a member's run status, or a running
member's flow, stale or bad) the line's flow is unknown: those pieces are no data or bad data
for the pump, never computed from a part of the flow (which would under-estimate the loss).

The functions here take held tags (objects with ``value``, ``bad`` and ``until`` arrays over
the pieces: the calculator's ``_Held``) so that the pump and its line are decided alike.
"""

from __future__ import annotations

import numpy as np

_FOREVER = np.iinfo(np.int64).max


def is_running(
    run, flow, speed, bep_flow: float, rated_speed: float, min_flow: float, min_speed: float
) -> np.ndarray:
    """Running or stopped on each piece (the values alone; see :func:`decide` for the
    parameters): the run status above 0.5, else flow [m³/s] above ``min_flow``·``bep_flow``
    and (with a speed tag) speed [rpm] above ``min_speed``·``rated_speed``."""
    if run is not None:
        return run.value > 0.5
    running = flow.value > min_flow * bep_flow
    if speed is not None:
        running &= speed.value > min_speed * rated_speed
    return running


def decide(
    run, flow, speed, bep_flow: float, rated_speed: float, min_flow: float, min_speed: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Running or stopped on each piece, which pieces the deciding tags leave bad, and until
    when [ns] they stay fresh.

    Parameters
    ----------
    run, flow, speed : held tags or None
        Run status [-] (above 0.5: running), flow [m³/s], speed [rpm]; without a run status
        the pump runs when its flow exceeds ``min_flow``·``bep_flow`` and (with a speed tag)
        its speed ``min_speed``·``rated_speed``.
    bep_flow : float
        BEP flow [m³/s].
    rated_speed : float
        Rated speed [rpm].
    min_flow, min_speed : float
        Fractions of BEP flow and rated speed [-] (plant file ``[running]``).
    """
    running = is_running(run, flow, speed, bep_flow, rated_speed, min_flow, min_speed)
    deciding = [run] if run is not None else [flow] + ([speed] if speed is not None else [])
    n = len(running)
    bad = np.zeros(n, dtype=bool)
    until = np.full(n, _FOREVER, dtype=np.int64)
    for h in deciding:
        bad |= h.bad
        until = np.minimum(until, h.until)
    return running, bad, until


def line_flow(
    pump, held: dict, grid: np.ndarray, min_flow: float, min_speed: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The total flow [m³/s] of the pump's shared suction line on each piece, which pieces it
    leaves bad and until when [ns] it is known (for the pump's running pieces).

    Parameters
    ----------
    pump : PumpSpec
        A pump with a ``shared_line``.
    held : dict
        The pump's held tags by role: its own ``flow``, the optional ``header_flow``, and each
        other member's tags as ``<pump_id>:flow``, ``<pump_id>:run``, ``<pump_id>:speed``.
    grid : numpy.ndarray
        Start of each piece [ns]; the header's expiry instants are among them, so a header
        sample fresh at a piece's start is fresh to its end.
    min_flow, min_speed : float
        Fractions of BEP flow and rated speed [-] deciding running without a run status.
    """
    # the pump's own flow: on its running pieces it runs, and its flow's freshness is already
    # required of every running piece
    total = np.array(held["flow"].value, dtype=np.float64, copy=True)
    bad = np.zeros(len(grid), dtype=bool)
    until = np.full(len(grid), _FOREVER, dtype=np.int64)
    for m in pump.peers():
        q = held[f"{m.pump_id}:flow"]
        running, d_bad, d_until = decide(
            held.get(f"{m.pump_id}:run"), q, held.get(f"{m.pump_id}:speed"), m.bep_flow,
            m.rated_speed, min_flow, min_speed,
        )  # fmt: skip
        total += np.where(running, q.value, 0.0)  # a stopped member carries nothing
        bad |= d_bad | (running & q.bad)
        until = np.minimum(until, np.where(running, np.minimum(d_until, q.until), d_until))
    header = held.get("header_flow")
    if header is not None:
        use = ~header.bad & (header.until > grid)  # measured on the common line: it wins
        total = np.where(use, header.value, total)
        bad = np.where(use, False, bad)
        until = np.where(use, header.until, until)
    return total, bad, until
