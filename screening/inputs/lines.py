"""Shared suction lines: vessel-fed pumps whose register rows name the same ``suction_line_id``.

A suction header shared by several pumps carries the sum of their flows, and its friction loss
grows with the square of that sum: two equal pumps running together lose four times what one
loses alone (h = k·Q², Darcy–Weisbach at a constant friction factor). The line is described
once per line, in the register rows of its members: the same design point
(``line_loss_head``/``line_loss_flow``) or the same geometry (``line_length``, ``line_bore``,
``line_roughness``, ``line_fittings_k``), the same fluid and the same optional header flow tag
(``header_flow_tag``, ``header_flow_unit``) in every member's row. Rows that disagree are
refused, all members of the line with them, by a message that names the rows: a line whose
data is in doubt would give every member a loss in doubt.

A member whose own row cannot be read makes the line's flow unknown, so the other members are
refused as well. A member refused later for another reason (an unknown curve, say) still
counts: its flow and run-status tags are read for the line.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np

from screening.inputs.pumpspec import LineMember, PumpSpec, SharedLine, SuctionLine, TagSpec
from screening.inputs.units import to_si

#: Relative tolerance when comparing the line data of two rows [-]: the same value written in
#: different units ("10 m", "32.8084 ft") agrees; a different value does not.
REL_TOL = 1e-6


def _same(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return bool(np.isclose(a, b, rtol=REL_TOL, atol=0.0))


def _same_line(a: SuctionLine | None, b: SuctionLine | None) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return all(_same(getattr(a, f.name), getattr(b, f.name)) for f in dataclasses.fields(a))


def _describe_line(line: SuctionLine | None) -> str:
    if line is None:
        return "no line data"
    if line.k is not None:
        return f"design point k = {line.k:.6g} s²/m⁵"
    return (
        f"length {line.length:g} m, bore {1000 * line.bore:g} mm, roughness "
        f"{1000 * line.roughness:g} mm, fittings K {line.fittings_k:g}"
    )


def _flow_factor(spec: TagSpec | None) -> float | None:
    """[m³/s] per unit of the header flow tag, to compare units written differently."""
    return None if spec is None else float(to_si(np.array([1.0]), spec.unit, "flow")[0])


def _describe_header(spec: TagSpec | None) -> str:
    return "no header flow tag" if spec is None else f"header flow tag {spec.tag} in {spec.unit}"


def _disagreement(path: Path, line_id: str, members: list[PumpSpec]) -> str | None:
    """Why the members' rows cannot describe one line, naming the rows; None if they agree."""
    first = members[0]
    where = f"{path}: suction line {line_id!r}"
    if first.suction_line is None and all(m.suction_line is None for m in members):
        return (
            f"{where}: no member row gives the line's loss; give in the rows of "
            f"{', '.join(m.pump_id for m in members)} either line_loss_head and line_loss_flow "
            "or line_length, line_bore and line_roughness (and line_fittings_k)"
        )
    checks = (
        ("the line's loss (line_loss_* or line_length/bore/roughness/fittings_k)",
         lambda m: _same_line(m.suction_line, first.suction_line),
         lambda m: _describe_line(m.suction_line)),
        ("the fluid", lambda m: m.fluid == first.fluid, lambda m: m.fluid),
        ("the header flow tag (header_flow_tag, header_flow_unit)",
         lambda m: (m.header_flow is None) == (first.header_flow is None)
         and (m.header_flow is None or (m.header_flow.tag == first.header_flow.tag and _same(
             _flow_factor(m.header_flow), _flow_factor(first.header_flow)))),
         lambda m: _describe_header(m.header_flow)),
    )  # fmt: skip
    for what, agrees, describe in checks:
        for m in members[1:]:
            if not agrees(m):
                return (
                    f"{where}: line {first.line} (pump {first.pump_id}) and line {m.line} "
                    f"(pump {m.pump_id}) disagree on {what}: {describe(first)} against "
                    f"{describe(m)}; give the line's data the same in every member's row"
                )
    return None


def join_lines(
    path: Path, pumps: dict[str, PumpSpec], failed: dict[str, list[tuple[int, str]]]
) -> list[tuple[str, str]]:
    """Join the members of every shared suction line (in place in ``pumps``).

    Parameters
    ----------
    path : Path
        The register file (for messages).
    pumps : dict
        The register's usable pumps by id; members of a refused line are removed.
    failed : dict
        Per line id, the rows naming it that could not be read: (line number, pump id).

    Returns
    -------
    list of (pump_id, message)
        One per refused member.
    """
    groups: dict[str, list[PumpSpec]] = {}
    for p in pumps.values():
        if p.suction_line_id is not None:
            groups.setdefault(p.suction_line_id, []).append(p)
    refused: list[tuple[str, str]] = []
    for line_id, members in groups.items():
        message = _disagreement(path, line_id, members)
        if line_id in failed:
            line, pid = failed[line_id][0]
            message = (
                f"{path}: suction line {line_id!r}: the row on line {line} (pump {pid}) names "
                "this line but could not be read (see its own problem), so the line's total "
                "flow is unknown"
            )
        if message is not None:
            for m in members:
                refused.append((m.pump_id, message))
                del pumps[m.pump_id]
            continue
        shared = SharedLine(
            line_id,
            tuple(
                LineMember(m.pump_id, m.flow, m.run, m.speed, m.bep_flow, m.rated_speed)
                for m in members
            ),  # fmt: skip
            members[0].header_flow,
        )
        for m in members:
            pumps[m.pump_id] = dataclasses.replace(m, shared_line=shared)
    return refused
