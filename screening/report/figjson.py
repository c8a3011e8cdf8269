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

import base64
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


def numbers(values) -> np.ndarray:
    """Numbers as a C-contiguous float64 array (any shape) that :func:`dumps` writes as a
    (nested) JSON list, with ``null`` where a value is NaN or infinite."""
    return np.ascontiguousarray(values, dtype=float)


#: Numeric arrays at least this long are written as packed typed arrays (:func:`packed`).
PACK_FROM = 16
#: Marker of a trace's ``x`` that the page fills with the figure's shared time axis.
SHARED_TIME = "shared-time"


def packed(values, dtype: str = "f4") -> dict:
    """Numbers as a plotly.js typed array: ``{"dtype", "bdata", "shape"}``, the values
    little-endian, base64-encoded (4 bytes a value for ``"f4"`` instead of about 18 characters
    of JSON text). NaN stays NaN, which plotly.js draws as a gap or an empty cell. float32
    keeps 7 significant digits, far finer than a plot shows; ``"f8"`` for times in
    milliseconds."""
    a = np.ascontiguousarray(values, dtype="<" + dtype)
    out = {"dtype": dtype, "bdata": base64.b64encode(a.tobytes()).decode("ascii")}
    if a.ndim > 1:
        out["shape"] = ",".join(str(n) for n in a.shape)
    return out


#: The 16-bit code of a missing value in :func:`quantized` arrays.
Q16_MISSING = -32768


def quantized(values) -> dict:
    """A 1-D series as 16-bit steps between its least and greatest value: ``{"q16": base64 of
    little-endian int16, "lo", "step"}``, decoded in the page to ``lo + (code + 32767)·step``
    (``null`` for :data:`Q16_MISSING`, a NaN or infinite value). The rounding is at most half
    a step, 1/131068 of the series' range, far below a pixel; the tables beside the page keep
    every digit. Half the bytes of float32, for the long time series of a pump page."""
    a = np.asarray(values, dtype=np.float64)
    ok = np.isfinite(a)
    lo = float(a[ok].min()) if ok.any() else 0.0
    hi = float(a[ok].max()) if ok.any() else 0.0
    step = (hi - lo) / 65534 if hi > lo else 1.0
    code = np.full(a.shape, Q16_MISSING, dtype="<i2")
    code[ok] = np.rint((a[ok] - lo) / step).astype(np.int64) - 32767
    return {"q16": base64.b64encode(code.tobytes()).decode("ascii"), "lo": lo, "step": step}


def packed_times(ms) -> dict:
    """A sorted time axis [ms] packed: as unsigned 32-bit millisecond offsets from its first
    time (``"t0"``) where the span allows (under 49 days: a month's window), else as float64
    milliseconds."""
    a = np.asarray(ms, dtype=np.float64)
    whole = len(a) and np.all(np.isfinite(a)) and np.all(a == np.rint(a))
    if whole and a[-1] - a[0] < 2**32 - 1:
        return {**packed(a - a[0], "u4"), "t0": float(a[0])}
    return packed(a, "f8")


def _pack_trace(trace: dict, series16: bool = False) -> dict:
    """A trace with its long numeric arrays (x, y, z) packed (:func:`packed`); with
    ``series16`` a long 1-D ``y`` is :func:`quantized` instead."""
    out = dict(trace)
    for key in ("x", "y", "z"):
        v = out.get(key)
        if isinstance(v, np.ndarray) and v.dtype.kind in "fiu" and v.size >= PACK_FROM:
            out[key] = quantized(v) if series16 and key == "y" and v.ndim == 1 else packed(v)
    return out


def local_ms(times: pd.Series, tz: str) -> np.ndarray:
    """Timestamps as the wall-clock time in ``tz`` in milliseconds since 1970 [ms] (float64),
    which a plotly.js date axis draws as that wall-clock time."""
    # on the datetime array itself: the Series accessors cost three times the conversion
    wall = np.asarray(times.array.tz_convert(tz).tz_localize(None), dtype="datetime64[ms]")
    return wall.astype(np.int64).astype(np.float64)


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


#: Puts the shared time axis (packed float64 milliseconds) into every trace marked with
#: :data:`SHARED_TIME`, so that a page carries its times once, not once per line.
_SHARED_JS = (
    "  if (f.times) {\n"
    "    var s = atob(f.times.bdata), b = new Uint8Array(s.length);\n"
    "    for (var i = 0; i < s.length; i++) { b[i] = s.charCodeAt(i); }\n"
    "    var t0 = f.times.t0 || 0;\n"
    "    var a = f.times.dtype === 'u4' ? new Uint32Array(b.buffer) : new Float64Array(b.buffer);\n"
    "    var t = Array.from(a, function (v) { return v + t0; });\n"
    f"    f.data.forEach(function (d) {{ if (d.x === {SHARED_TIME!r}) {{ d.x = t; }} }});\n"
    "  }\n"
    "  f.data.forEach(function (d) {\n"
    "    if (!d.y || d.y.q16 === undefined) { return; }\n"
    "    var s = atob(d.y.q16), b = new Uint8Array(s.length);\n"
    "    for (var i = 0; i < s.length; i++) { b[i] = s.charCodeAt(i); }\n"
    "    var c = new Int16Array(b.buffer), y = new Array(c.length);\n"
    "    for (var j = 0; j < c.length; j++) {\n"
    f"      y[j] = c[j] === {Q16_MISSING} ? null : d.y.lo + (c[j] + 32767) * d.y.step;\n"
    "    }\n"
    "    d.y = y;\n"
    "  });\n"
).replace("'", '"')
#: Builds the rectangles of :data:`spans <figure_html>` from their packed edges.
_SPANS_JS = (
    "  (f.spans || []).forEach(function (g) {\n"
    "    var s = atob(g.edges.bdata), b = new Uint8Array(s.length);\n"
    "    for (var i = 0; i < s.length; i++) { b[i] = s.charCodeAt(i); }\n"
    "    var e = new Float64Array(b.buffer);\n"
    "    f.layout.shapes = f.layout.shapes || [];\n"
    "    for (var k = 0; k + 1 < e.length; k += 2) {\n"
    "      f.layout.shapes.push(Object.assign({}, g.shape, {x0: e[k], x1: e[k + 1],\n"
    "                                                       showlegend: k === 0}));\n"
    "    }\n"
    "  });\n"
)


def figure_html(fig: dict, div_id: str) -> str:
    """The ``<div>`` of a figure and the scripts that draw it with ``Plotly.newPlot``.

    ``fig`` is ``{"data": [...], "layout": {...}}``, with optionally ``"times"``: one time
    axis [ms of wall-clock time, :func:`local_ms`] for every trace whose ``x`` is
    :data:`SHARED_TIME` (then the traces' long ``y`` series are :func:`quantized`), and
    ``"spans"``: a list of ``{"edges": array of (start, end) pairs [ms], "shape": a layout
    shape without x0 and x1}``, drawn as one shape per pair (the first in the legend), so
    that a hundred shaded stops cost a few bytes each. The texts of its traces are made plain
    text (:func:`plain_trace`), long numeric arrays packed (:func:`packed`), the report's look
    (:data:`TEMPLATE`) and :data:`CONFIG` are added here. Needs plotly.min.js loaded before it.
    """
    timed = fig.get("times") is not None
    payload = {
        "data": [_pack_trace(plain_trace(t), timed) for t in fig["data"]],
        "layout": {**fig["layout"], "template": TEMPLATE},
        "config": CONFIG,
    }
    if timed:
        payload["times"] = packed_times(fig["times"])
    if fig.get("spans"):
        payload["spans"] = [
            {
                "edges": packed(np.ravel(np.asarray(g["edges"], dtype=float)), "f8"),
                "shape": g["shape"],
            }
            for g in fig["spans"]
        ]
    attr = html.escape(div_id, quote=True)
    return (
        f'<div id="{attr}" class="plotly-graph-div" style="height:100%; width:100%;"></div>\n'
        f'<script type="application/json" id="{attr}-figure">{dumps(payload)}</script>\n'
        "<script>(function () {\n"
        f"  var f = JSON.parse(document.getElementById({dumps(div_id + '-figure')}).textContent);\n"
        + (_SHARED_JS if "times" in payload else "")
        + (_SPANS_JS if "spans" in payload else "")
        + f"  Plotly.newPlot({dumps(div_id)}, f.data, f.layout, f.config);\n"
        "})();</script>"
    )


def vline(x, colour: str = "#1d1d1d", dash: str = "solid", width: float = 1.5) -> dict:
    """A layout shape: a vertical line at ``x`` (a date text or number) over the whole
    height of the plot."""
    return {"type": "line", "xref": "x", "yref": "paper", "x0": x, "x1": x, "y0": 0, "y1": 1,
            "line": {"color": colour, "width": width, "dash": dash}}  # fmt: skip


def vband(x0, x1, fill: str) -> dict:
    """A layout shape: a shaded band from ``x0`` to ``x1`` behind the traces, full height."""
    return {"type": "rect", "xref": "x", "yref": "paper", "x0": x0, "x1": x1, "y0": 0, "y1": 1,
            "fillcolor": fill, "line": {"width": 0}, "layer": "below"}  # fmt: skip


def label_at(x, text: str, y: float = 1.02, **font) -> dict:
    """A layout annotation: ``text`` (escaped: it may come from the plant's files) at ``x``,
    at height ``y`` as a fraction of the plot (above it for y > 1), without an arrow."""
    note = {"x": x, "xref": "x", "yref": "paper", "y": y, "yanchor": "bottom",
            "text": html.escape(text, quote=False), "showarrow": False}  # fmt: skip
    if font:
        note["font"] = font
    return note
