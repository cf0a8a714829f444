"""Reading and writing street networks.

Roundsman reads four formats, recognised by their content (never by the file
name's extension):

``"geojson"``
    GeoJSON (RFC 7946) LineString/MultiLineString streets, see
    :mod:`core.files.geojson`.  Also written.
``"project"``
    Roundsman's own versioned JSON file, see :mod:`core.files.project`.
    Also written; the only format that keeps everything.
``"carplib"``
    CARPLIB ``.dat`` arc routing instances, see :mod:`core.files.carplib`.
``"salt-spreading"``
    Salt-spreading JSON instances, see :mod:`core.files.saltspread`.
``"geopackage"``
    OGC GeoPackage line layers, see :mod:`core.files.gpkg` (binary; read by
    :func:`read_network` only).
``"osm"``
    OpenStreetMap ``.osm`` XML (also gzip/bzip2-compressed) and ``.osm.pbf``,
    see :mod:`core.files.osm` (read by :func:`read_network` only).
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from core.errors import InputError, UnknownFormatError
from core.files._jsonio import load_json, read_text, source_label
from core.files.carplib import parse_carplib
from core.files.geojson import DEFAULT_SNAP_TOLERANCE, parse_geojson, write_geojson
from core.files.project import FORMAT_NAME, project_from_dict, save_project
from core.files.saltspread import parse_saltspread
from core.model import Network

FORMATS: tuple[str, ...] = (
    "geojson",
    "project",
    "carplib",
    "salt-spreading",
    "geopackage",
    "osm",
)
"""The formats :func:`read_network` reads."""

WRITE_FORMATS: tuple[str, ...] = ("project", "geojson")
"""The formats :func:`write_network` writes."""

FORMAT_LABELS: dict[str, str] = {
    "geojson": "GeoJSON",
    "project": "Roundsman project",
    "carplib": "CARPLIB .dat",
    "salt-spreading": "salt-spreading JSON",
    "geopackage": "GeoPackage",
    "osm": "OpenStreetMap XML/PBF",
}

_FILE_FORMATS = ("geopackage", "osm")
"""Formats read from the file itself (binary, or streamed), not from its text."""

__all__ = [
    "FORMATS",
    "FORMAT_LABELS",
    "WRITE_FORMATS",
    "detect_format",
    "parse_network",
    "read_network",
    "write_network",
]


def _readable() -> str:
    return ", ".join(FORMAT_LABELS[f] for f in FORMATS)


def _detect(text: str, source: str | None) -> tuple[str, Any]:
    """The format of ``text`` and, for JSON formats, the parsed document."""
    stripped = text.lstrip("\ufeff \t\r\n")
    if not stripped:
        raise InputError("the file is empty", source=source)
    if stripped[0] in "{[":
        doc = load_json(text, source=source)  # unstripped, so line numbers stay true
        if isinstance(doc, dict):
            if doc.get("type") in ("FeatureCollection", "Feature"):
                return "geojson", doc
            fmt = doc.get("format")
            if isinstance(fmt, str) and fmt.startswith(FORMAT_NAME):
                return "project", doc
            if "nodes" in doc and any(k in doc for k in ("E_R", "A_R", "A")):
                return "salt-spreading", doc
        raise UnknownFormatError(
            "this JSON is none of the formats Roundsman reads "
            f'({_readable()}): it has no "type": "FeatureCollection" or "Feature", '
            f'no "format": "{FORMAT_NAME}", and no "nodes" with "E_R", "A_R" or "A"',
            source=source,
        )
    if "NOMBRE" in text and "VERTICES" in text:
        return "carplib", None
    raise UnknownFormatError(
        f"the content matches none of the formats Roundsman reads ({_readable()})",
        source=source,
    )


def detect_format(text: str) -> str:
    """Name the format of a file's content: one of :data:`FORMATS`.

    Raises
    ------
    InputError
        The text is empty, or is broken JSON (naming the line).
    UnknownFormatError
        The content is none of the formats read.
    """
    return _detect(text, None)[0]


def parse_network(
    text: str,
    *,
    fmt: str | None = None,
    source: str | None = None,
    name: str = "",
    snap_tolerance: float = DEFAULT_SNAP_TOLERANCE,
    on_error: str = "reject",
) -> Network:
    """Build a network from file content.

    Parameters
    ----------
    text
        The content.
    fmt
        One of :data:`FORMATS`, or ``None`` to recognise it from the content.
    source
        The file name for error messages.
    name
        The network name when the content does not give one.
    snap_tolerance
        Metres within which GeoJSON vertices are one junction.
    on_error
        GeoJSON: ``"reject"`` stops at a broken feature, ``"skip"`` lists and
        leaves it out.
    """
    if fmt is not None and fmt not in FORMATS:
        raise InputError(
            f"unknown format {fmt!r}; Roundsman reads {', '.join(FORMATS)}", source=source
        )
    if fmt in _FILE_FORMATS:
        raise InputError(
            f"{FORMAT_LABELS[fmt]} is read from a file (read_network), not from text",
            source=source,
        )
    if fmt is None:
        fmt, doc = _detect(text, source)
    elif not text.strip():
        raise InputError("the file is empty", source=source)
    else:
        doc = None
    if fmt == "carplib":
        return parse_carplib(text, source=source, name=name)
    if doc is None:
        doc = load_json(text, source=source)
    if fmt == "geojson":
        return parse_geojson(
            doc, source=source, snap_tolerance=snap_tolerance, name=name, on_error=on_error
        )
    if fmt == "project":
        return project_from_dict(doc, source=source, name=name)
    return parse_saltspread(doc, source=source, name=name)


def read_network(
    path: str | os.PathLike[str],
    *,
    fmt: str | None = None,
    snap_tolerance: float = DEFAULT_SNAP_TOLERANCE,
    layer: str | None = None,
    highways: Iterable[str] | None = None,
    on_error: str = "reject",
) -> Network:
    """Read a street network file in any of :data:`FORMATS`.

    GeoPackage and OpenStreetMap files are recognised by their first bytes
    (the SQLite header with the GeoPackage application id; an OSMHeader PBF
    block or an ``<osm>`` XML element); other files are read as UTF-8 and
    their format recognised from the content, unless ``fmt`` names it.
    ``layer`` picks the GeoPackage layer, ``highways`` the OpenStreetMap
    highway classes, and ``on_error`` (``"reject"`` or ``"skip"``) what they
    and GeoJSON do with broken features; the other text formats ignore it.

    Raises
    ------
    InputError
        The file is missing, unreadable, not UTF-8, empty or broken, naming the
        file and the line or feature at fault.
    UnknownFormatError
        The content matches none of the formats.
    """
    if fmt is not None and fmt not in FORMATS:
        raise InputError(
            f"unknown format {fmt!r}; Roundsman reads {', '.join(FORMATS)}",
            source=source_label(path),
        )
    binary = fmt if fmt in _FILE_FORMATS else None
    if fmt is None:
        binary = _sniff_file(path)
    if binary == "geopackage":
        from core.files.gpkg import read_gpkg

        return read_gpkg(path, layer=layer, on_error=on_error, snap_tolerance=snap_tolerance)
    if binary == "osm":
        from core.files.osm import read_osm

        return read_osm(path, highways=highways, on_error=on_error)
    text = read_text(path)
    return parse_network(
        text,
        fmt=fmt,
        source=source_label(path),
        name=Path(path).stem,
        snap_tolerance=snap_tolerance,
        on_error=on_error,
    )


def _sniff_file(path: str | os.PathLike[str]) -> str | None:
    """``"geopackage"`` or ``"osm"`` when the first bytes say so, else ``None``."""
    from core.files.gpkg import sniff_gpkg
    from core.files.osm import sniff_osm_file

    try:
        with open(path, "rb") as handle:
            head = handle.read(100)
        if sniff_gpkg(head):
            return "geopackage"
        if sniff_osm_file(path) is not None:
            return "osm"
    except OSError:
        return None  # read_text names the problem
    return None


def write_network(network: Network, path: str | os.PathLike[str], fmt: str = "project") -> None:
    """Write a network atomically as a Roundsman project (everything is kept)
    or as GeoJSON (networks with coordinates only)."""
    if fmt == "project":
        save_project(network, path)
    elif fmt == "geojson":
        write_geojson(network, path)
    else:
        raise InputError(
            f"Roundsman writes {' and '.join(FORMAT_LABELS[f] for f in WRITE_FORMATS)} files, "
            f"not {fmt!r}",
            source=source_label(path),
        )
