"""CARPLIB ``.dat`` files: capacitated arc routing instances on undirected graphs.

The text format of the published benchmark sets (gdb, val, egl)::

     NOMBRE : gdb1
     COMENTARIO : 10000 (cota superior)
     VERTICES : 12
     ARISTAS_REQ : 22
     ARISTAS_NOREQ : 0
     VEHICULOS : 5
     CAPACIDAD : 5
     TIPO_COSTES_ARISTAS : EXPLICITOS
     COSTE_TOTAL_REQ : 252
     LISTA_ARISTAS_REQ :
     ( 1 , 2)  coste 13 demanda 1
     ...
     LISTA_ARISTAS_NOREQ :
     ( 5, 6)   coste 8
     ...
     DEPOSITO :   1

The network has nodes ``"1"`` … ``"VERTICES"`` without coordinates and one
two-way segment per edge, with ids ``"1"``, ``"2"``, … over all edges in file
order (required edges first, as the file lists them).  Required edges get
``Service.EITHER`` and their ``demanda`` as demand; the others
``Service.NONE``.  ``coste`` is the segment's (given) length.  The line
layout varies between files (spacing, CRLF line ends), so lines are matched
with regular expressions rather than split on fixed columns.
"""

from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any

from core.errors import InputError, NetworkError
from core.files._jsonio import read_text, source_label
from core.model import Network, Node, OneWay, Segment, Service

_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
_SPEC = re.compile(r"^\s*([A-Za-z_]+)\s*:\s*(.*?)\s*$")
_EDGE = re.compile(
    rf"^\s*\(\s*(\d+)\s*,\s*(\d+)\s*\)\s*coste\s+({_NUMBER})"
    rf"(?:\s+demanda\s+({_NUMBER}))?\s*$",
    re.IGNORECASE,
)
_INTEGER_KEYS = ("VERTICES", "ARISTAS_REQ", "ARISTAS_NOREQ", "VEHICULOS", "DEPOSITO")
_REQUIRED_KEYS = ("VERTICES", "ARISTAS_REQ", "ARISTAS_NOREQ", "DEPOSITO")


def read_carplib(path: str | os.PathLike[str]) -> Network:
    """Read a CARPLIB ``.dat`` file.  See :func:`parse_carplib`."""
    return parse_carplib(read_text(path), source=source_label(path), name=Path(path).stem)


def parse_carplib(text: str, *, source: str | None = None, name: str = "") -> Network:
    """Build a network from CARPLIB text.

    Parameters
    ----------
    text
        The file content.
    source
        The file name for error messages.
    name
        The network name when the file has no ``NOMBRE``.

    Raises
    ------
    InputError
        Naming the line: unknown lines, edges outside the edge lists, node
        numbers outside 1..VERTICES, edge counts that differ from
        ``ARISTAS_REQ``/``ARISTAS_NOREQ``, lengths that are not positive.
    """
    if not text.strip():
        raise InputError("the file is empty", source=source)

    spec: dict[str, tuple[str, int]] = {}  # key -> (value, line number)
    edges: list[tuple[int, int, int, float, float | None, bool]] = []
    section: str | None = None
    for lineno, line in enumerate(text.splitlines(), 1):
        if not line.strip():
            continue
        edge = _EDGE.match(line)
        if edge:
            if section is None:
                raise InputError(
                    "an edge line before LISTA_ARISTAS_REQ or LISTA_ARISTAS_NOREQ",
                    source=source,
                    line=lineno,
                )
            required = section == "LISTA_ARISTAS_REQ"
            demand = edge.group(4)
            if required and demand is None:
                raise InputError(
                    "a required edge needs 'demanda D' after its cost", source=source, line=lineno
                )
            if not required and demand is not None:
                raise InputError(
                    "an edge with a demand in LISTA_ARISTAS_NOREQ (edges without service)",
                    source=source,
                    line=lineno,
                )
            edges.append(
                (
                    lineno,
                    int(edge.group(1)),
                    int(edge.group(2)),
                    float(edge.group(3)),
                    None if demand is None else float(demand),
                    required,
                )
            )
            continue
        match = _SPEC.match(line)
        if not match:
            raise InputError(
                f"this line is neither 'KEY : value' nor an edge '( i , j ) coste C': "
                f"{line.strip()[:60]!r}",
                source=source,
                line=lineno,
            )
        key, value = match.group(1).upper(), match.group(2)
        if key in ("LISTA_ARISTAS_REQ", "LISTA_ARISTAS_NOREQ"):
            section = key
            continue
        if key in spec:
            raise InputError(
                f"{key} is given twice (first on line {spec[key][1]})", source=source, line=lineno
            )
        spec[key] = (value, lineno)
        if key == "DEPOSITO":
            section = None

    for key in _REQUIRED_KEYS:
        if key not in spec:
            raise InputError(f"the file has no '{key} :' line", source=source)
    numbers = {key: _integer(spec, key, source) for key in _INTEGER_KEYS if key in spec}
    if "TIPO_COSTES_ARISTAS" in spec:
        kind, lineno = spec["TIPO_COSTES_ARISTAS"]
        if kind.upper() != "EXPLICITOS":
            raise InputError(
                f"TIPO_COSTES_ARISTAS {kind!r} is not read; only EXPLICITOS (costs listed "
                "with each edge)",
                source=source,
                line=lineno,
            )

    n_vertices = numbers["VERTICES"]
    for key, required in (("ARISTAS_REQ", True), ("ARISTAS_NOREQ", False)):
        found = sum(1 for e in edges if e[5] is required)
        if found != numbers[key]:
            listing = "LISTA_ARISTAS_REQ" if required else "LISTA_ARISTAS_NOREQ"
            raise InputError(
                f"{key} says {numbers[key]} edges but {listing} lists {found}",
                source=source,
                line=spec[key][1],
            )

    instance = spec["NOMBRE"][0] if "NOMBRE" in spec else name
    network = Network(instance or name)
    for k in range(1, n_vertices + 1):
        network.add_node(Node(str(k)))
    for k, (lineno, i, j, cost, demand, required) in enumerate(edges, 1):
        for end in (i, j):
            if not 1 <= end <= n_vertices:
                raise InputError(
                    f"edge ({i}, {j}) ends at node {end}, outside 1..{n_vertices} (VERTICES)",
                    source=source,
                    line=lineno,
                )
        if demand is not None and demand < 0:
            raise InputError(
                f"edge ({i}, {j}) has a negative demand ({demand:g})", source=source, line=lineno
            )
        try:
            network.add_segment(
                Segment(
                    id=str(k),
                    start=str(i),
                    end=str(j),
                    length=cost,
                    oneway=OneWay.NO,
                    service=Service.EITHER if required else Service.NONE,
                    demand=demand or 0.0,
                )
            )
        except NetworkError as exc:
            raise InputError(
                f"edge ({i}, {j}): {exc.message}", source=source, line=lineno
            ) from None

    depot = numbers["DEPOSITO"]
    if not 1 <= depot <= n_vertices:
        raise InputError(
            f"the depot {depot} is outside 1..{n_vertices} (VERTICES)",
            source=source,
            line=spec["DEPOSITO"][1],
        )
    network.depot = str(depot)
    network.meta = {
        "source_format": "carplib",
        "instance": instance,
        "capacity": _capacity(spec, source),
        "vehicles": numbers.get("VEHICULOS"),
    }
    return network


def _integer(spec: dict[str, tuple[str, int]], key: str, source: str | None) -> int:
    value, lineno = spec[key]
    if not re.fullmatch(r"\d+", value):
        raise InputError(f"{key} must be a whole number, not {value!r}", source=source, line=lineno)
    return int(value)


def _capacity(spec: dict[str, tuple[str, int]], source: str | None) -> Any:
    if "CAPACIDAD" not in spec:
        return None
    value, lineno = spec["CAPACIDAD"]
    if not re.fullmatch(_NUMBER, value):
        raise InputError(f"CAPACIDAD must be a number, not {value!r}", source=source, line=lineno)
    number = float(value)
    return int(number) if number.is_integer() else number
