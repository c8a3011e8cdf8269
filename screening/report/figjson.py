"""Figures as plain plotly.js JSON, written into a page and drawn there by plotly.min.js.

A figure is a dict ``{"data": [...], "layout": {...}}`` in plotly.js's own schema, built with
lists and dicts only (no plotly Python objects: their property checks cost more than the
whole rest of a report page). :func:`figure_html` serialises it and adds a short script that
calls ``Plotly.newPlot``.

Values: numbers go in as numpy arrays (:func:`numbers`) and come out, written by orjson, as
JSON lists with ``null`` for NaN (a gap in a line, an empty heatmap cell); :func:`local_times`
turns timestamps into ISO strings of the wall-clock time in the site's time zone (plotly.js
draws dates without a zone).

Safety: plotly.js reads a subset of HTML in every text it draws (``<a href>``, ``<b>``,
``<br>``, ``<span style>``...), in trace names, category labels on the axes and hover text. So
every text of a trace (:data:`TEXT_KEYS`) is escaped (:func:`plain_texts`: ``&``, ``<`` and
``>`` as entities, which plotly.js shows as the characters) before it is drawn: a pump id
``<a href="...">x</a>`` shows as written, never as a link. Layout texts (titles, notes, hover
templates) are the report's own.

The JSON sits inside a ``<script>`` element, so every ``<``, ``>`` and ``&`` in it is
written as a ``\\u`` escape; text from the plant's files (pump ids, tag names) can then never
close the script or open a comment, and the JSON still parses to the same strings.
"""

from __future__ import annotations

import html
from typing import Any

import numpy as np
import orjson
import pandas as pd

#: The look every figure gets (the default look of plotly's Python figures, which the report
#: used before it wrote its figures as JSON), trimmed to the trace types the report draws.
_COLORSCALE = [
    [0.0, "#0d0887"], [0.1111111111111111, "#46039f"], [0.2222222222222222, "#7201a8"],
    [0.3333333333333333, "#9c179e"], [0.4444444444444444, "#bd3786"],
    [0.5555555555555556, "#d8576b"], [0.6666666666666666, "#ed7953"],
    [0.7777777777777778, "#fb9f3a"], [0.8888888888888888, "#fdca26"], [1.0, "#f0f921"],
]  # fmt: skip
_AXIS = {
    "gridcolor": "white",
    "linecolor": "white",
    "ticks": "",
    "title": {"standoff": 15},
    "zerolinecolor": "white",
    "automargin": True,
    "zerolinewidth": 2,
}
TEMPLATE: dict[str, Any] = {
    "data": {
        "bar": [
            {
                "error_x": {"color": "#2a3f5f"},
                "error_y": {"color": "#2a3f5f"},
                "marker": {
                    "line": {"color": "#E5ECF6", "width": 0.5},
                    "pattern": {"fillmode": "overlay", "size": 10, "solidity": 0.2},
                },
                "type": "bar",
            }
        ],
        "scatter": [
            {"fillpattern": {"fillmode": "overlay", "size": 10, "solidity": 0.2}, "type": "scatter"}
        ],
        "heatmap": [
            {
                "type": "heatmap",
                "colorbar": {"outlinewidth": 0, "ticks": ""},
                "colorscale": _COLORSCALE,
            }
        ],
    },
    "layout": {
        "autotypenumbers": "strict",
        "colorway": [
            "#636efa",
            "#EF553B",
            "#00cc96",
            "#ab63fa",
            "#FFA15A",
            "#19d3f3",
            "#FF6692",
            "#B6E880",
            "#FF97FF",
            "#FECB52",
        ],  # fmt: skip
        "font": {"color": "#2a3f5f"},
        "hovermode": "closest",
        "hoverlabel": {"align": "left"},
        "paper_bgcolor": "white",
        "plot_bgcolor": "#E5ECF6",
        "coloraxis": {"colorbar": {"outlinewidth": 0, "ticks": ""}},
        "colorscale": {"sequential": _COLORSCALE, "sequentialminus": _COLORSCALE},
        "xaxis": _AXIS,
        "yaxis": _AXIS,
        "shapedefaults": {"line": {"color": "#2a3f5f"}},
        "annotationdefaults": {"arrowcolor": "#2a3f5f", "arrowhead": 0, "arrowwidth": 1},
        "title": {"x": 0.05},
    },
}

#: Options of every plot: redraw to the width of the page.
CONFIG: dict[str, Any] = {"responsive": True}

# written as \u escapes inside the <script> element (see the module docstring)
_ESCAPES = (
    (b"<", b"\\u003c"), (b">", b"\\u003e"), (b"&", b"\\u0026"),
    ("\u2028".encode(), b"\\u2028"), ("\u2029".encode(), b"\\u2029"),
)  # fmt: skip
_OPTIONS = orjson.OPT_SERIALIZE_NUMPY


#: Keys of a trace whose strings plotly.js draws as (a subset of) HTML.
TEXT_KEYS = ("x", "y", "z", "text", "hovertext", "name", "customdata", "labels", "ids")


def plain_texts(value: Any) -> Any:
    """``value`` with every string in it (in lists, tuples, arrays of objects, nested) made
    plain text for plotly.js: ``&``, ``<`` and ``>`` as HTML entities. Numbers, numeric
    arrays and None are returned as they are."""
    if isinstance(value, str):
        return html.escape(value, quote=False)
    if isinstance(value, np.ndarray | pd.Series | pd.Index):
        a = np.asarray(value)
        return [plain_texts(v) for v in a.tolist()] if a.dtype.kind in "OUS" else value
    if isinstance(value, list | tuple):
        if value and all(type(v) is str for v in value):
            joined = "".join(value)  # fast path: long lists of times hold nothing to escape
            if "&" not in joined and "<" not in joined and ">" not in joined:
                return value
        return [plain_texts(v) for v in value]
    return value


def plain_trace(trace: dict) -> dict:
    """A copy of a trace dict with its texts (:data:`TEXT_KEYS`) made plain text."""
    return {k: plain_texts(v) if k in TEXT_KEYS else v for k, v in trace.items()}


def plain_figure(fig) -> None:
    """Make the texts of every trace of a plotly Python figure plain text, in place (the
    onset and what-if pages, drawn with plotly's figure objects)."""
    for trace in fig.data:
        for key in TEXT_KEYS:
            if key in trace and trace[key] is not None:
                value = trace[key]
                trace[key] = plain_texts(list(value) if isinstance(value, tuple) else value)


def numbers(values) -> np.ndarray:
    """Numbers as a C-contiguous float64 array (any shape) that :func:`dumps` writes as a
    (nested) JSON list, with ``null`` where a value is NaN or infinite."""
    return np.ascontiguousarray(values, dtype=float)


def local_times(times: pd.Series, tz: str) -> list[str]:
    """Timestamps as ISO strings of the wall-clock time in ``tz`` (no offset; to the second,
    or to the millisecond where a time has a fraction of a second)."""
    wall = times.dt.tz_convert(tz).dt.tz_localize(None).to_numpy(dtype="datetime64[ms]")
    whole = not (wall.astype(np.int64) % 1000).any()
    return np.datetime_as_string(wall, unit="s" if whole else "ms").tolist()


def _default(value):
    if isinstance(value, np.ndarray | pd.Series | pd.Index):
        a = np.asarray(value)
        return numbers(a) if a.dtype.kind in "fiub" else a.tolist()
    raise TypeError(f"cannot write {type(value).__name__} into a figure")


def dumps(obj: Any) -> str:
    """Compact JSON of ``obj``, safe inside a ``<script>`` element (no ``<``, ``>``, ``&``).

    numpy arrays and pandas series are written as lists, with null for NaN and infinity
    (as are float NaN and infinity anywhere).
    """
    text = orjson.dumps(obj, default=_default, option=_OPTIONS)
    for char, escape in _ESCAPES:
        if char in text:
            text = text.replace(char, escape)
    return text.decode()


def figure_html(fig: dict, div_id: str) -> str:
    """The ``<div>`` of a figure and the scripts that draw it with ``Plotly.newPlot``.

    ``fig`` is ``{"data": [...], "layout": {...}}``; the texts of its traces are made plain
    text (:func:`plain_trace`), the report's look (:data:`TEMPLATE`) and :data:`CONFIG` are
    added here. Needs plotly.min.js loaded before it.
    """
    payload = {
        "data": [plain_trace(t) for t in fig["data"]],
        "layout": {**fig["layout"], "template": TEMPLATE},
        "config": CONFIG,
    }
    attr = html.escape(div_id, quote=True)
    return (
        f'<div id="{attr}" class="plotly-graph-div" style="height:100%; width:100%;"></div>\n'
        f'<script type="application/json" id="{attr}-figure">{dumps(payload)}</script>\n'
        "<script>(function () {\n"
        f"  var f = JSON.parse(document.getElementById({dumps(div_id + '-figure')}).textContent);\n"
        f"  Plotly.newPlot({dumps(div_id)}, f.data, f.layout, f.config);\n"
        "})();</script>"
    )
