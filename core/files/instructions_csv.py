"""CSV export of the driver's instructions, one row per instruction.

Written with Python's :mod:`csv` module (RFC 4180 quoting, CRLF line ends),
UTF-8, with a header row.  The columns are stable; new ones may be added at
the end:

``number, kind, clock, instruction, street, turn, angle_deg, across_traffic,
distance_m, cumulative_m, service_m, deadhead_m, service_changes, note, node,
segments``

``distance_m`` is the distance to the next instruction, ``cumulative_m`` the
distance driven before this one; ``segments`` lists street ids separated by
spaces.
"""

from __future__ import annotations

import csv
import io
import os

from core.directions import Directions, Instruction
from core.files.atomic import atomic_write_text

COLUMNS: tuple[str, ...] = (
    "number",
    "kind",
    "clock",
    "instruction",
    "street",
    "turn",
    "angle_deg",
    "across_traffic",
    "distance_m",
    "cumulative_m",
    "service_m",
    "deadhead_m",
    "service_changes",
    "note",
    "node",
    "segments",
)

__all__ = ["COLUMNS", "instruction_row", "instructions_csv_text", "write_instructions_csv"]


def instruction_row(row: Instruction) -> dict[str, str]:
    """One instruction as CSV cells (text, as the csv module writes them)."""
    return {
        "number": str(row.number),
        "kind": row.kind,
        "clock": row.clock,
        "instruction": row.text,
        "street": row.street,
        "turn": row.turn.value if row.turn is not None else "",
        "angle_deg": f"{row.angle:.1f}",
        "across_traffic": "yes" if row.across_traffic else "no",
        "distance_m": f"{row.length_m:.1f}",
        "cumulative_m": f"{row.start_m:.1f}",
        "service_m": f"{row.service_m:.1f}",
        "deadhead_m": f"{row.deadhead_m:.1f}",
        "service_changes": row.service_text,
        "note": row.note,
        "node": row.node,
        "segments": " ".join(row.segments),
    }


def instructions_csv_text(directions: Directions) -> str:
    """The instructions as CSV text. O(n) rows."""
    buf = io.StringIO(newline="")
    writer = csv.DictWriter(buf, fieldnames=COLUMNS)
    writer.writeheader()
    for row in directions.instructions:
        writer.writerow(instruction_row(row))
    return buf.getvalue()


def write_instructions_csv(directions: Directions, path: str | os.PathLike[str]) -> None:
    """Write the instruction CSV atomically."""
    atomic_write_text(path, instructions_csv_text(directions))
