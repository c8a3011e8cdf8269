"""The states every hour of a pump's screening window falls in, exactly one at a time.

Running states (margin bands, best to worst is the reverse of this order):
- ``below_npsh3``: NPSHa below NPSH3 at the running point: the pump is losing head to
  cavitation (NPSH3 is the NPSH at a 3 % head drop, ANSI/HI 1.6).
- ``below_guidance``: NPSHa at or above NPSH3 but below the margin policy's guidance.
- ``meets_guidance``: at or above the guidance, below the ample ratio.
- ``ample_margin``: at or above both the guidance and the policy's ample ratio.
- ``off_curve``: running at a flow outside the vendor curve's tested range: no NPSH3 is
  extrapolated, so no band can be given.
Other states:
- ``stopped``: the pump was not running.
- ``no_data``: a needed tag had no sample, or its last sample was older than its stale limit.
- ``bad_data``: a needed tag held a bad sample (text, bad quality, frozen, impossible value).
- ``starting``: running, within the settling time after a start (``[running]
  settle_after_start``): the short low-margin moments of a start are counted here, apart from
  the bands, and left out of the required setpoints.

Cavitation can begin well above NPSH3; the names say where the margin stood against the
policy, not that the pump did or did not cavitate.
"""

from __future__ import annotations

BELOW_NPSH3 = 0
BELOW_GUIDANCE = 1
MEETS_GUIDANCE = 2
AMPLE_MARGIN = 3
OFF_CURVE = 4
STOPPED = 5
NO_DATA = 6
BAD_DATA = 7
STARTING = 8

#: State names, indexed by state code.
STATES: tuple[str, ...] = (
    "below_npsh3",
    "below_guidance",
    "meets_guidance",
    "ample_margin",
    "off_curve",
    "stopped",
    "no_data",
    "bad_data",
    "starting",
)
#: The margin bands (running with a known NPSH3).
BANDS: tuple[str, ...] = STATES[:4]
#: States in which the pump was running with its margin screened (the bands and off_curve);
#: ``starting`` is running too, but not screened.
RUNNING: tuple[str, ...] = STATES[:5]
