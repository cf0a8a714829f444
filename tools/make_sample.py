"""Generate the demo district: Thistlewick, a fictional town.

Writes ``sample_data/thistlewick.geojson``: an RFC 7946 FeatureCollection of
LineString streets, one depot Point and turning-place Points, longitude/latitude on WGS 84, placed
in the open North Atlantic around 32° W, 47° N so that it is no real place.
Everything, street names included, is invented; the layout is drawn from a
fixed seed, so running this again gives the same file byte for byte.

The town: an uneven 12 x 9 grid core (blocks 78–118 m by 70–102 m, junctions
jittered and the grid gently warped), some grid streets left out, short
closes into the blocks; a High Street with a one-way loop around the Market
Place; two one-way pairs and one one-way stretch; five crescents (curved
polylines) with closes off them; dead-end spurs round the edge; a bypass ring
joined by eight link roads at roundabouts (turning places: a large vehicle
may come back on itself there), one of them a dual carriageway; farm lanes and an
industrial estate outside the ring with the works depot at its far end; and
Old Mill Lane, which passes under the bypass on a bridge without a junction.

Streets meet at shared vertices (identical coordinates), so a GeoJSON reader
that nodes lines at shared vertices and at line ends finds the junctions.
Before writing, the script checks its own output with an independent noding
of the coordinates: that no two lines cross except at shared vertices (but
the one bridge), that distinct vertices are at least 1 m apart, and that the
drivable digraph is strongly connected (networkx); if a one-way street broke
strong connectivity it would be made two-way again and reported.

Run from the repository root::

    python tools/make_sample.py            # write sample_data/thistlewick.geojson
    python tools/make_sample.py --check    # regenerate and compare with the file
"""

from __future__ import annotations

import argparse
import itertools
import json
import math
import sys
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import networkx as nx
import numpy as np
import shapely
from pyproj import Transformer
from scipy.spatial import cKDTree

ROOT = Path(__file__).resolve().parents[1]
OUTPUT = ROOT / "sample_data" / "thistlewick.geojson"
SEED = 20240917
CENTRE_LONLAT = (-32.0, 47.0)
LOCAL_CRS = "EPSG:32625"  # UTM zone 25N (36° W to 30° W), metres
ROTATION_DEG = 8.0
DECIMALS = 7  # about 1 cm
BRIDGE = ("Old Mill Lane", "Thistlewick Bypass")

Point = tuple[float, float]
Vertex = str | Point  # a node key (shared junction) or a free bend vertex

# -- names (all invented) -----------------------------------------------------

COLUMN_NAMES = [  # west to east
    "Wheelwright Lane",
    "Tannery Row",
    "Cooper's Walk",
    "Ropewalk",
    "Chandler Street",
    "Bellfounder Lane",
    "Maltings Road",
    "Dyers Lane",
    "Saddler Street",
    "Fleece Lane",
    "Weavers Row",
    "Quarry Hill",
]
ROW_NAMES = [  # south to north
    "Orchard Road",
    "Furrow Lane",
    "Lantern Street",
    "Well Street",
    "High Street",
    "Corn Street",
    "Pennywort Lane",
    "Gorse Road",
    "Bramblefold Road",
]
BLOCK_CLOSE_NAMES = [
    "Pippin Close",
    "Hayrick Close",
    "Flint Court",
    "Rookery Close",
    "Wren Close",
    "Sorrel Court",
    "Quince Close",
    "Damson Close",
    "Ferrier's Yard",
    "Cobbler's Yard",
]
EDGE_SPUR_NAMES = [
    "Nettle Close",
    "Heron Close",
    "Oakapple Close",
    "Tithe Barn Close",
    "Bluebell Court",
    "Cowslip Close",
    "Sedge Court",
    "Dovecote Close",
    "Yarrow Close",
    "Plover Court",
    "Kestrel Close",
    "Bramling Court",
    "Hopground Close",
]
CRESCENT_CLOSE_NAMES = [
    "Teasel Close",
    "Lapwing Close",
    "Thrift Close",
    "Barley Mow Court",
    "Bracken Close",
    "Marigold Court",
]

# -- layout ---------------------------------------------------------------------

COLS, ROWS = len(COLUMN_NAMES), len(ROW_NAMES)
HIGH_ROW = 4
MARKET = {  # the one-way loop round the Market Place (west, north x2, east)
    ((5, 4), (5, 5)): +1,
    ((5, 5), (6, 5)): +1,
    ((6, 5), (7, 5)): +1,
    ((7, 4), (7, 5)): -1,
}
MARKET_GAP = ((6, 4), (6, 5))  # the square itself: no street across it
MARKET_BLOCKS = {(5, 4), (6, 4)}
ONE_WAY = {
    # Cooper's Walk northbound and Ropewalk southbound, south of the High Street
    **{((2, j), (2, j + 1)): +1 for j in range(0, 4)},
    **{((3, j), (3, j + 1)): -1 for j in range(0, 4)},
    # Fleece Lane southbound and Weavers Row northbound, north of Corn Street
    **{((9, j), (9, j + 1)): -1 for j in range(5, 8)},
    **{((10, j), (10, j + 1)): +1 for j in range(5, 8)},
    # Lantern Street westbound between Maltings Road and Fleece Lane
    **{((i, 2), (i + 1, 2)): -1 for i in range(6, 9)},
}
ALONG = {k for k in ONE_WAY if k[0][0] in (2, 3) and k[1][0] in (2, 3)} | {
    k for k in ONE_WAY if k[0][1] == k[1][1] == 2
}
NO_SERVICE_COLUMNS = {1}  # Tannery Row: private yard lanes, kept by their owners

RING_VERTICES = 90  # one every 4 degrees
RING_A, RING_B = 880.0, 650.0

# (from grid node, ring vertex index, name, service, passes)
LINKS = [
    ((11, 4), 0, "Eastgate Road", "none", 1),
    ((11, 7), 6, "Hollowmere Road", "none", 1),
    ((6, 8), 22, "Tollgate Way", "both", 2),  # dual carriageway
    ((1, 8), 30, "Kilnfield Road", "none", 1),
    ((0, 4), 45, "Westgate Road", "none", 1),
    ((0, 2), 50, "Fenny Lane", "none", 1),
    ((4, 0), 65, "Sheepwash Lane", "none", 1),
    ((9, 0), 73, "Netherbrook Road", "either", 1),
]
FARM_LANES = [(37, "Withy Lane", 130.0), (57, "Stonechat Lane", 110.0)]
WORKS_VERTEX = 81

# (first grid node, last grid node, name, outward bulge in m, one-way, close positions)
CRESCENTS = [
    ((6, 0), (8, 0), "Larkspur Crescent", 110.0, False, (0.5,)),
    ((11, 1), (11, 3), "Millpond Crescent", 100.0, True, (0.5,)),
    ((2, 8), (4, 8), "Hazelbank Crescent", 105.0, False, (0.5,)),
    ((0, 5), (0, 7), "Foxglove Crescent", 100.0, False, (0.3, 0.7)),
    ((8, 8), (10, 8), "Beacon Crescent", 95.0, True, (0.5,)),
]
# grid nodes on the edge of town with a dead-end close pointing outwards
EDGE_SPURS = [
    (0, 0),
    (5, 0),
    (10, 0),
    (11, 0),
    (11, 5),
    (11, 6),
    (11, 8),
    (7, 8),
    (5, 8),
    (0, 8),
    (0, 3),
    (0, 1),
    (2, 0),
]
OLD_MILL_FROM = (1, 0)
N_REMOVED = 14
N_BLOCK_CLOSES = 10


@dataclass
class Street:
    """One LineString feature: vertices in drawing order and its properties."""

    name: str
    coords: list[Vertex]
    oneway: bool = False
    service: str = "either"
    passes: int = 1


@dataclass
class Town:
    """The layout in local metres: shared junctions by key, streets, the depot node."""

    nodes: dict[str, Point] = field(default_factory=dict)
    streets: list[Street] = field(default_factory=list)
    depot: str = ""
    turning_places: list[str] = field(default_factory=list)

    def node(self, key: str, xy: Point) -> str:
        """Make a shared junction (a vertex that lines will meet at) and return its key."""
        if key in self.nodes:
            raise ValueError(f"node {key} made twice")
        self.nodes[key] = (float(xy[0]), float(xy[1]))
        return key


def g(i: int, j: int) -> str:
    """Key of the grid junction in column ``i`` (from the west), row ``j`` (from the south)."""
    return f"g{i}_{j}"


def _unit(dx: float, dy: float) -> Point:
    n = math.hypot(dx, dy)
    return dx / n, dy / n


def _ring_point(k: int) -> Point:
    """Vertex ``k`` of the bypass: a slightly wobbly ellipse round the town."""
    t = 2.0 * math.pi * k / RING_VERTICES
    f = 1.0 + 0.035 * math.sin(3.0 * t + 0.7)
    return RING_A * f * math.cos(t), RING_B * f * math.sin(t)


def _bezier(a: Point, control: Point, b: Point, n: int) -> list[Point]:
    """``n`` points along the quadratic Bézier curve from ``a`` to ``b``."""
    ts = np.linspace(0.0, 1.0, n)
    return [
        (
            float((1 - t) ** 2 * a[0] + 2 * (1 - t) * t * control[0] + t**2 * b[0]),
            float((1 - t) ** 2 * a[1] + 2 * (1 - t) * t * control[1] + t**2 * b[1]),
        )
        for t in ts
    ]


def _outward(i: int, j: int) -> Point:
    """Unit vector pointing out of the grid at a perimeter node."""
    dx = -1.0 if i == 0 else (1.0 if i == COLS - 1 else 0.0)
    dy = -1.0 if j == 0 else (1.0 if j == ROWS - 1 else 0.0)
    return _unit(dx, dy)


def _spur(
    town: Town,
    key: str,
    start: str,
    direction: Point,
    length: float,
    rng: np.random.Generator,
    *,
    bend: bool,
) -> list[Vertex]:
    """A dead end from ``start``: straight, or with one gentle bend."""
    x0, y0 = town.nodes[start]
    dx, dy = direction
    if not bend:
        return [start, town.node(key, (x0 + dx * length, y0 + dy * length))]
    side = float(rng.choice([-1.0, 1.0]))
    mid = (x0 + dx * length * 0.55, y0 + dy * length * 0.55)
    turn = math.radians(25.0) * side
    ex = math.cos(turn) * dx - math.sin(turn) * dy
    ey = math.sin(turn) * dx + math.cos(turn) * dy
    end = (mid[0] + ex * length * 0.45, mid[1] + ey * length * 0.45)
    return [start, mid, town.node(key, end)]


def build_town(seed: int = SEED) -> Town:
    """Lay out Thistlewick in local metres (x east, y north, origin at the centre)."""
    rng = np.random.default_rng(seed)
    town = Town()

    # Grid core: uneven blocks, warped and jittered junctions.
    cx = np.concatenate([[0.0], np.cumsum(rng.uniform(78.0, 118.0, COLS - 1))])
    cy = np.concatenate([[0.0], np.cumsum(rng.uniform(70.0, 102.0, ROWS - 1))])
    cx -= (cx[0] + cx[-1]) / 2.0
    cy -= (cy[0] + cy[-1]) / 2.0
    for j in range(ROWS):
        for i in range(COLS):
            x = cx[i] + 18.0 * math.sin(cy[j] / 260.0) + rng.uniform(-9.0, 9.0)
            y = cy[j] + 10.0 * math.sin(cx[i] / 310.0) + rng.uniform(-9.0, 9.0)
            town.node(g(i, j), (x, y))

    edges: dict[tuple[tuple[int, int], tuple[int, int]], dict[str, Any]] = {}
    for j in range(ROWS):
        for i in range(COLS):
            if i + 1 < COLS:
                edges[((i, j), (i + 1, j))] = {"name": ROW_NAMES[j]}
            if j + 1 < ROWS:
                edges[((i, j), (i, j + 1))] = {"name": COLUMN_NAMES[i]}
    for key, attrs in edges.items():
        (i0, j0), (i1, j1) = key
        attrs.update(oneway=0, service="either", passes=1, mid=None)
        if j0 == j1 == HIGH_ROW:
            attrs["service"] = "both"
        if i0 == i1 and i0 in NO_SERVICE_COLUMNS:
            attrs["service"] = "none"
        if key in ONE_WAY:
            attrs["oneway"] = ONE_WAY[key]
            attrs["service"] = "along" if key in ALONG else "either"
        if key in MARKET:
            attrs.update(name="Market Place", oneway=MARKET[key], service="both")
    del edges[MARKET_GAP]

    # Leave out some interior grid streets, keeping the grid connected.
    protected = set(ONE_WAY) | set(MARKET)

    def interior(key: tuple[tuple[int, int], tuple[int, int]]) -> bool:
        (i0, j0), (i1, _) = key
        if i0 == i1:
            return 0 < i0 < COLS - 1
        return 0 < j0 < ROWS - 1 and j0 != HIGH_ROW

    grid = nx.Graph(list(edges))
    candidates = [k for k in edges if interior(k) and k not in protected]
    removed = 0
    for idx in rng.permutation(len(candidates)):
        if removed == N_REMOVED:
            break
        key = candidates[int(idx)]
        grid.remove_edge(*key)
        if nx.is_connected(grid):
            del edges[key]
            removed += 1
        else:
            grid.add_edge(*key)

    # Closes into blocks from the middle of a block side (at most one per block).
    used_blocks = set(MARKET_BLOCKS)
    candidates = [k for k in edges if k not in protected and edges[k]["name"] != "High Street"]
    closes = 0
    for idx in rng.permutation(len(candidates)):
        if closes == N_BLOCK_CLOSES:
            break
        key = candidates[int(idx)]
        (i0, j0), (i1, _) = key
        # Blocks are named by their south-west junction.
        sides = [(i0 - 1, j0), (i0, j0)] if i0 == i1 else [(i0, j0 - 1), (i0, j0)]
        sides = [
            b
            for b in sides
            if 0 <= b[0] < COLS - 1 and 0 <= b[1] < ROWS - 1 and b not in used_blocks
        ]
        if not sides:
            continue
        block = sides[int(rng.integers(len(sides)))]
        used_blocks.add(block)
        a, b = town.nodes[g(*key[0])], town.nodes[g(*key[1])]
        t = rng.uniform(0.42, 0.58)
        mid = town.node(f"m{closes}", (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])))
        edges[key]["mid"] = mid
        # Point into the block: towards the block's centre, square to the street.
        bx, by = np.mean(
            [town.nodes[g(block[0] + di, block[1] + dj)] for di in (0, 1) for dj in (0, 1)], axis=0
        )
        along = _unit(b[0] - a[0], b[1] - a[1])
        normal = (-along[1], along[0])
        if normal[0] * (bx - town.nodes[mid][0]) + normal[1] * (by - town.nodes[mid][1]) < 0:
            normal = (-normal[0], -normal[1])
        depth = abs(normal[0] * (bx - town.nodes[mid][0]) + normal[1] * (by - town.nodes[mid][1]))
        coords = _spur(town, f"c{closes}", mid, normal, 0.8 * depth, rng, bend=closes % 3 == 2)
        name = BLOCK_CLOSE_NAMES[closes]
        # Yards are private: their owners keep them clean.
        service = "none" if name.endswith("Yard") else "either"
        town.streets.append(Street(name, coords, service=service))
        closes += 1

    # Grid streets: maximal runs of equal properties along each row and column.
    lines = [[((i, j), (i + 1, j)) for i in range(COLS - 1)] for j in range(ROWS)]
    lines += [[((i, j), (i, j + 1)) for j in range(ROWS - 1)] for i in range(COLS)]
    for line in lines:
        run: list[tuple[tuple[int, int], tuple[int, int]]] = []
        for key in [*line, None]:
            if run and (
                key is None
                or key not in edges
                or _props(edges[key]) != _props(edges[run[-1]])
                or key[0] != run[-1][1]
            ):
                town.streets.append(_grid_street(run, edges))
                run = []
            if key is not None and key in edges:
                run.append(key)

    # The bypass ring and what hangs off it.
    junctions = sorted({v for _, v, *_ in LINKS} | {v for v, *_ in FARM_LANES} | {WORKS_VERTEX})
    for v in junctions:
        town.node(f"r{v}", _ring_point(v))
    for a, b in zip(junctions, [*junctions[1:], junctions[0] + RING_VERTICES], strict=True):
        arc: list[Vertex] = [f"r{a}"]
        arc += [_ring_point(k % RING_VERTICES) for k in range(a + 1, b)]
        arc.append(f"r{b % RING_VERTICES}")
        town.streets.append(Street("Thistlewick Bypass", arc, service="none"))

    for (i, j), v, name, service, passes in LINKS:
        town.turning_places.append(f"r{v}")  # a roundabout where the link meets the bypass
        a, b = town.nodes[g(i, j)], town.nodes[f"r{v}"]
        along = _unit(b[0] - a[0], b[1] - a[1])
        off = 8.0 if (i + j) % 2 else -8.0
        bend = (
            a[0] + 0.5 * (b[0] - a[0]) - along[1] * off,
            a[1] + 0.5 * (b[1] - a[1]) + along[0] * off,
        )
        town.streets.append(Street(name, [g(i, j), bend, f"r{v}"], service=service, passes=passes))

    for v, name, length in FARM_LANES:
        out = _unit(*_ring_point(v))
        coords = _spur(town, f"farm{v}", f"r{v}", out, length, rng, bend=True)
        town.streets.append(Street(name, coords, service="none"))

    # Industrial estate outside the ring, with the works depot at the end of Depot Way.
    out = _unit(*_ring_point(WORKS_VERTEX))
    side = (-out[1], out[0])
    r0 = town.nodes[f"r{WORKS_VERTEX}"]

    def at(dist: float, lateral: float = 0.0) -> Point:
        return (
            r0[0] + out[0] * dist + side[0] * lateral,
            r0[1] + out[1] * dist + side[1] * lateral,
        )

    j1 = town.node("works1", at(150.0))
    j2 = town.node("works2", at(250.0))
    town.streets.append(
        Street("Works Road", [f"r{WORKS_VERTEX}", at(75.0, 6.0), j1, j2], service="none")
    )
    town.streets.append(
        Street("Furnace Road", [j1, town.node("furnace", at(175.0, 110.0))], service="none")
    )
    town.streets.append(
        Street(
            "Saltshed Lane",
            [j1, at(160.0, -50.0), town.node("saltshed", at(185.0, -95.0))],
            service="none",
        )
    )
    town.streets.append(
        Street("Gritstore Lane", [j2, town.node("gritstore", at(270.0, 90.0))], service="none")
    )
    town.depot = town.node("depot", at(330.0, -40.0))
    town.streets.append(Street("Depot Way", [j2, at(295.0, -25.0), town.depot], service="none"))

    # Crescents bulging out of the grid, with closes off them.
    close_names = iter(CRESCENT_CLOSE_NAMES)
    for ci, (first, last, name, bulge, oneway, close_at) in enumerate(CRESCENTS):
        a, b = town.nodes[g(*first)], town.nodes[g(*last)]
        out = _outward(*first)
        mid = ((a[0] + b[0]) / 2.0, (a[1] + b[1]) / 2.0)
        control = (mid[0] + 2.0 * bulge * out[0], mid[1] + 2.0 * bulge * out[1])
        pts = _bezier(a, control, b, 13)
        coords: list[Vertex] = [g(*first), *pts[1:-1], g(*last)]
        for n, t in enumerate(close_at):
            k = round(t * 12)
            junction = town.node(f"cres{ci}_{n}", pts[k])
            coords[k] = junction
            tangent = _unit(pts[k + 1][0] - pts[k - 1][0], pts[k + 1][1] - pts[k - 1][1])
            normal = (tangent[1], -tangent[0])
            if normal[0] * out[0] + normal[1] * out[1] < 0:
                normal = (-normal[0], -normal[1])
            spur = _spur(town, f"cres{ci}_{n}e", junction, normal, 50.0, rng, bend=n == 1)
            town.streets.append(Street(next(close_names), spur))
        town.streets.append(Street(name, coords, oneway=oneway))

    # Dead-end closes on the edge of town, pointing outwards.
    for n, (i, j) in enumerate(EDGE_SPURS):
        length = float(rng.uniform(45.0, 70.0))
        coords = _spur(town, f"edge{n}", g(i, j), _outward(i, j), length, rng, bend=n % 2 == 1)
        town.streets.append(Street(EDGE_SPUR_NAMES[n], coords))

    # Old Mill Lane: south from the edge of town, under the bypass, to the old mill.
    a = town.nodes[g(*OLD_MILL_FROM)]
    coords = [g(*OLD_MILL_FROM), (a[0] + 6.0, a[1] - 120.0), (a[0] - 4.0, a[1] - 260.0)]
    coords.append(town.node("oldmill", (a[0] + 20.0, a[1] - 360.0)))
    town.streets.append(Street("Old Mill Lane", coords))
    return town


def _props(attrs: dict[str, Any]) -> tuple[Any, ...]:
    return attrs["name"], attrs["oneway"], attrs["service"], attrs["passes"]


def _grid_street(run: list, edges: dict) -> Street:
    attrs = edges[run[0]]
    coords: list[Vertex] = [g(*run[0][0])]
    for key in run:
        if edges[key]["mid"] is not None:
            coords.append(edges[key]["mid"])
        coords.append(g(*key[1]))
    if attrs["oneway"] < 0:
        coords.reverse()
    return Street(attrs["name"], coords, bool(attrs["oneway"]), attrs["service"], attrs["passes"])


# -- GeoJSON ------------------------------------------------------------------


def _to_lonlat(town: Town) -> Any:
    """A function mapping local metres to rounded (lon, lat)."""
    to_utm = Transformer.from_crs("EPSG:4326", LOCAL_CRS, always_xy=True)
    to_wgs = Transformer.from_crs(LOCAL_CRS, "EPSG:4326", always_xy=True)
    e0, n0 = to_utm.transform(*CENTRE_LONLAT)
    c, s = math.cos(math.radians(ROTATION_DEG)), math.sin(math.radians(ROTATION_DEG))

    def convert(p: Point) -> list[float]:
        x, y = c * p[0] - s * p[1], s * p[0] + c * p[1]
        lon, lat = to_wgs.transform(e0 + x, n0 + y)
        return [round(lon, DECIMALS), round(lat, DECIMALS)]

    return convert


def town_to_geojson(town: Town) -> dict[str, Any]:
    """The FeatureCollection: one LineString per street, the depot Point, then turning places."""
    convert = _to_lonlat(town)
    node_lonlat = {key: convert(xy) for key, xy in town.nodes.items()}

    def lonlat(v: Vertex) -> list[float]:
        return node_lonlat[v] if isinstance(v, str) else convert(v)

    features: list[dict[str, Any]] = []
    for street in town.streets:
        props: dict[str, Any] = {
            "name": street.name,
            "oneway": "yes" if street.oneway else "no",
            "service": street.service,
        }
        if street.passes > 1:
            props["passes"] = street.passes
        features.append(
            {
                "type": "Feature",
                "properties": props,
                "geometry": {
                    "type": "LineString",
                    "coordinates": [lonlat(v) for v in street.coords],
                },
            }
        )
    features.append(
        {
            "type": "Feature",
            "properties": {"depot": True, "name": "Thistlewick Works Depot"},
            "geometry": {"type": "Point", "coordinates": node_lonlat[town.depot]},
        }
    )
    for key in town.turning_places:
        features.append(
            {
                "type": "Feature",
                "properties": {"turning_place": True, "name": "roundabout"},
                "geometry": {"type": "Point", "coordinates": node_lonlat[key]},
            }
        )
    return {"type": "FeatureCollection", "name": "Thistlewick", "features": features}


def geojson_text(doc: dict[str, Any]) -> str:
    """Compact JSON with one feature a line, for readable diffs."""
    head = {k: v for k, v in doc.items() if k != "features"}
    opening = json.dumps(head, ensure_ascii=False)[:-1] + ', "features": [\n'
    body = ",\n".join(json.dumps(f, ensure_ascii=False) for f in doc["features"])
    return opening + body + "\n]}\n"


# -- independent checks ---------------------------------------------------------


@dataclass
class Piece:
    """A street segment as a reader noding at shared vertices would find it."""

    feature: int
    start: tuple[float, float]
    end: tuple[float, float]
    oneway: bool
    service: str
    passes: int
    length: float


@dataclass
class Analysis:
    pieces: list[Piece]
    nodes: set[tuple[float, float]]
    problems: list[str]
    components: list[set[tuple[float, float]]]


def analyse(doc: dict[str, Any]) -> Analysis:
    """Node the lines at shared vertices and line ends, and check the layout.

    Checks: lines meet only at shared vertices (but the one bridge); distinct
    vertices are at least 1 m apart; the depot is on a node; every piece is
    at least 5 m long; the drivable digraph is strongly connected
    (``networkx.strongly_connected_components``).
    """
    to_utm = Transformer.from_crs("EPSG:4326", LOCAL_CRS, always_xy=True)
    lines = [(n, f) for n, f in enumerate(doc["features"]) if f["geometry"]["type"] == "LineString"]
    depot = next(f for f in doc["features"] if f["properties"].get("depot"))
    uses: Counter[tuple[float, float]] = Counter()
    ends: set[tuple[float, float]] = set()
    for _, f in lines:
        coords = [tuple(p) for p in f["geometry"]["coordinates"]]
        uses.update(coords)
        ends.update((coords[0], coords[-1]))
    nodes = ends | {v for v, k in uses.items() if k >= 2}
    problems: list[str] = []

    metres = {}
    for v in uses:
        metres[v] = to_utm.transform(*v)
    pieces: list[Piece] = []
    geoms = []
    for n, f in lines:
        coords = [tuple(p) for p in f["geometry"]["coordinates"]]
        props = f["properties"]
        geoms.append(shapely.LineString([metres[v] for v in coords]))
        cut = [k for k, v in enumerate(coords) if v in nodes]
        for a, b in itertools.pairwise(cut):
            length = shapely.LineString([metres[v] for v in coords[a : b + 1]]).length
            if length < 5.0:
                problems.append(f"feature {n} ({props['name']}) has a piece of {length:.1f} m")
            pieces.append(
                Piece(
                    n,
                    coords[a],
                    coords[b],
                    props["oneway"] == "yes",
                    props["service"],
                    int(props.get("passes", 1)),
                    length,
                )
            )

    # Lines may touch only at vertices they share.
    shared = np.array([metres[v] for v in nodes])
    shared_tree = cKDTree(shared)
    tree = shapely.STRtree(geoms)
    left, right = tree.query(geoms, predicate="intersects")
    bridges = 0
    for a, b in zip(left.tolist(), right.tolist(), strict=True):
        if a >= b:
            continue
        inter = shapely.get_coordinates(geoms[a].intersection(geoms[b]))
        dist, _ = shared_tree.query(inter)
        stray = inter[dist > 1e-3]
        names = {lines[a][1]["properties"]["name"], lines[b][1]["properties"]["name"]}
        if len(stray) and names == set(BRIDGE) and len(stray) == 1:
            bridges += 1
        elif len(stray):
            problems.append(
                f"features {lines[a][0]} and {lines[b][0]} ({' / '.join(sorted(names))}) cross "
                f"without a shared vertex near {stray[0].round(1).tolist()}"
            )
    if bridges != 1:
        problems.append(f"expected one bridge crossing, found {bridges}")

    close = cKDTree(np.array(list(metres.values()))).query_pairs(1.0)
    if close:
        problems.append(f"{len(close)} pairs of distinct vertices are less than 1 m apart")
    if tuple(depot["geometry"]["coordinates"]) not in nodes:
        problems.append("the depot is not on a node")

    dg = nx.DiGraph()
    dg.add_nodes_from(nodes)
    for p in pieces:
        dg.add_edge(p.start, p.end)
        if not p.oneway:
            dg.add_edge(p.end, p.start)
    components = list(nx.strongly_connected_components(dg))
    if len(components) > 1:
        problems.append(f"the drivable digraph has {len(components)} strong components")
    return Analysis(pieces, nodes, problems, components)


def repair_one_way(town: Town, analysis: Analysis) -> list[str]:
    """Make two-way every one-way street that joins two strong components.

    Returns the names of the streets changed.  Streets between components are
    necessarily one-way, so each call merges components.
    """
    label = {v: k for k, comp in enumerate(analysis.components) for v in comp}
    features = {p.feature for p in analysis.pieces if p.oneway and label[p.start] != label[p.end]}
    changed = []
    for n in sorted(features):
        street = town.streets[n]  # features are written in street order
        street.oneway = False
        changed.append(street.name)
    return changed


def summary(analysis: Analysis) -> dict[str, Any]:
    """Counts and lengths of the pieces, for the console."""
    pieces = analysis.pieces
    degree: Counter[tuple[float, float]] = Counter()
    for p in pieces:
        degree[p.start] += 1
        degree[p.end] += 1
    n = len(pieces)
    one_way = sum(p.oneway for p in pieces)
    no_service = sum(p.service == "none" for p in pieces)
    return {
        "segments": n,
        "nodes": len(analysis.nodes),
        "dead ends": sum(1 for d in degree.values() if d == 1),
        "one-way": f"{one_way} ({100 * one_way / n:.0f} %)",
        "service none": f"{no_service} ({100 * no_service / n:.0f} %)",
        "service both": sum(p.service == "both" for p in pieces),
        "service along": sum(p.service == "along" for p in pieces),
        "passes 2": sum(p.passes > 1 for p in pieces),
        "street km": round(sum(p.length for p in pieces) / 1000.0, 2),
        "service km": round(sum(p.length for p in pieces if p.service != "none") / 1000.0, 2),
    }


def generate(seed: int = SEED) -> tuple[str, Analysis]:
    """Build, check and (if ever needed) repair the town; return the GeoJSON text."""
    town = build_town(seed)
    for _ in range(10):
        doc = town_to_geojson(town)
        analysis = analyse(doc)
        if len(analysis.components) == 1:
            break
        changed = repair_one_way(town, analysis)
        print(f"made two-way to keep every street reachable: {', '.join(changed)}", file=sys.stderr)
    if analysis.problems:
        raise SystemExit(
            "the generated town fails its checks:\n  " + "\n  ".join(analysis.problems)
        )
    return geojson_text(doc), analysis


def _reader_count(path: Path) -> int | None:
    """Segments found by the project's own reader, when it is importable."""
    if str(ROOT) not in sys.path:
        sys.path.insert(0, str(ROOT))
    try:
        from core.files import read_network
    except ImportError:
        return None
    return len(read_network(path))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--output", type=Path, default=OUTPUT)
    parser.add_argument(
        "--check",
        action="store_true",
        help="compare a fresh generation with the file; write nothing",
    )
    args = parser.parse_args(argv)
    text, analysis = generate()
    for key, value in summary(analysis).items():
        print(f"{key:>14}: {value}")
    if args.check:
        if not args.output.exists() or args.output.read_text(encoding="utf-8") != text:
            print(f"{args.output} differs from a fresh generation", file=sys.stderr)
            return 1
        print(f"{args.output} is up to date")
    else:
        args.output.parent.mkdir(parents=True, exist_ok=True)
        args.output.write_text(text, encoding="utf-8")
        print(f"wrote {args.output}")
    count = _reader_count(args.output)
    if count is not None:
        expected = len(analysis.pieces)
        verdict = "as expected" if count == expected else f"EXPECTED {expected}"
        print(f"core.files.read_network finds {count} segments, {verdict}")
        if count != expected:
            return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
