"""The report's colours: a palette of our own, readable by colour-blind readers and in grey.

Worse margin is darker and warmer (brown to amber), healthy margin is blue, states without a
margin are greys, the settling time after a start a light violet; lightness alone orders the
bands, so a greyscale print keeps their order.
Every bar and cell also carries a text label, so colour never carries meaning alone.
"""

from __future__ import annotations

STATE_COLOURS: dict[str, str] = {
    "below_npsh3": "#5c2a00",
    "below_guidance": "#c7761c",
    "meets_guidance": "#9cc3e4",
    "ample_margin": "#2d5f8f",
    "off_curve": "#7d7d7d",
    "stopped": "#d6d6d6",
    "no_data": "#f4f4f4",
    "bad_data": "#262626",
    "starting": "#b9a6cf",
}

#: Fill patterns (plotly bar pattern shapes) so that the states differ without colour.
STATE_PATTERNS: dict[str, str] = {
    "below_npsh3": "x",
    "below_guidance": "/",
    "meets_guidance": "",
    "ample_margin": "",
    "off_curve": ".",
    "stopped": "",
    "no_data": "\\",
    "bad_data": "+",
    "starting": "|",
}

STATE_LABELS: dict[str, str] = {
    "below_npsh3": "below NPSH3",
    "below_guidance": "below guidance",
    "meets_guidance": "meets guidance",
    "ample_margin": "ample margin",
    "off_curve": "off the vendor curve",
    "stopped": "stopped",
    "no_data": "no data",
    "bad_data": "bad data",
    "starting": "starting (settling after a start)",
}

#: Operating regions: the preferred region in the healthy blue, low and high flow in light and
#: mid amber, the two ends of the envelope in dark brown with distinct patterns.
REGION_COLOURS: dict[str, str] = {
    "below_min_flow": "#5c2a00",
    "low_flow": "#c7761c",
    "preferred_region": "#2d5f8f",
    "high_flow": "#e6b872",
    "beyond_allowable": "#7a3d0a",
    "stopped": STATE_COLOURS["stopped"],
    "no_data": STATE_COLOURS["no_data"],
    "bad_data": STATE_COLOURS["bad_data"],
    "starting": STATE_COLOURS["starting"],
}
REGION_PATTERNS: dict[str, str] = {
    "below_min_flow": "x",
    "low_flow": "/",
    "preferred_region": "",
    "high_flow": "\\",
    "beyond_allowable": "-",
    "stopped": "",
    "no_data": "\\",
    "bad_data": "+",
    "starting": "|",
}
REGION_LABELS: dict[str, str] = {
    "below_min_flow": "below minimum flow",
    "low_flow": "low flow",
    "preferred_region": "preferred region",
    "high_flow": "high flow",
    "beyond_allowable": "beyond allowable",
    "stopped": "stopped",
    "no_data": "no data",
    "bad_data": "bad data",
    "starting": "starting (settling after a start)",
}

#: Dark ink of lines that carry no state (process values).
INK = "#3a3a3a"

#: Shading of the time chart where a margin cannot be drawn, one colour per reason: stopped in
#: the light grey of the stopped state, bad data in a mid grey, no data in a pale violet that
#: neither band colour nor grey can be taken for.
GAP_COLOURS: dict[str, str] = {
    "stopped": "#cfcfcf",
    "bad_data": "#7a7a7a",
    "no_data": "#c9b8e8",
}
GAP_LABELS: dict[str, str] = {
    "stopped": "shaded: stopped",
    "bad_data": "shaded: bad data",
    "no_data": "shaded: no data",
}
