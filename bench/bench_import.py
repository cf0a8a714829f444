"""Import speed and memory: OpenStreetMap PBF and GeoPackage readers on synthetic grids.

Writes an N x N street grid (invented, in the open Atlantic at 32°W 47°N) as
an ``.osm.pbf`` (rows two-way, columns one-way; libosmium's writer) and as a
GeoPackage of two-point lon/lat lines (GDAL's writer through pyogrio), then
reads each in a fresh child process and prints a table of seconds and peak
resident memory.

    python3 bench/bench_import.py            # grids 100, 200 and 300
    python3 bench/bench_import.py --sizes 50 # a quick look
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import osmium
import pyogrio
import shapely

LON0, LAT0, STEP = -32.0, 47.0, 0.001

CHILD = """
import resource, sys, time
sys.path.insert(0, {root!r})
from core.files import read_network
t = time.perf_counter()
net = read_network({path!r})
dt = time.perf_counter() - t
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(len(net), len(net.nodes), f"{{dt:.2f}}", f"{{rss:.0f}}")
"""


def write_grid(folder: Path, n: int) -> tuple[Path, Path]:
    """The grid as PBF and as GeoPackage."""
    pbf = folder / f"grid{n}.osm.pbf"
    writer = osmium.SimpleWriter(str(pbf), overwrite=True)
    try:

        def nid(i: int, j: int) -> int:
            return i * n + j + 1

        for i in range(n):
            for j in range(n):
                location = (LON0 + j * STEP, LAT0 + i * STEP * 0.7)
                writer.add_node(osmium.osm.mutable.Node(id=nid(i, j), location=location, version=1))
        for i in range(n):
            refs = [nid(i, j) for j in range(n)]
            tags = {"highway": "residential", "name": f"Row {i}"}
            writer.add_way(osmium.osm.mutable.Way(id=i + 1, nodes=refs, tags=tags, version=1))
        for j in range(n):
            refs = [nid(i, j) for i in range(n)]
            tags = {"highway": "residential", "oneway": "yes"}
            writer.add_way(osmium.osm.mutable.Way(id=n + j + 1, nodes=refs, tags=tags, version=1))
    finally:
        writer.close()
    gpkg = folder / f"grid{n}.gpkg"
    lines = []
    for i in range(n):
        for j in range(n - 1):
            y = LAT0 + i * STEP * 0.7
            lines.append(shapely.LineString([(LON0 + j * STEP, y), (LON0 + (j + 1) * STEP, y)]))
            x = LON0 + i * STEP
            lines.append(
                shapely.LineString([(x, LAT0 + j * STEP * 0.7), (x, LAT0 + (j + 1) * STEP * 0.7)])
            )
    pyogrio.raw.write(
        str(gpkg),
        shapely.to_wkb(np.array(lines, dtype=object)),
        [np.array(["Grid Street"] * len(lines), dtype=object)],
        ["name"],
        driver="GPKG",
        geometry_type="LineString",
        crs="EPSG:4326",
        layer="streets",
    )
    return pbf, gpkg


def measure(path: Path) -> list[str]:
    root = str(Path(__file__).resolve().parents[1])
    out = subprocess.run(
        [sys.executable, "-c", CHILD.format(root=root, path=str(path))],
        capture_output=True,
        text=True,
        check=True,
    )
    return out.stdout.split()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[100, 200, 300])
    args = parser.parse_args()
    print("| file | grid | segments | nodes | seconds | peak RSS MiB |")
    print("|---|---:|---:|---:|---:|---:|")
    with tempfile.TemporaryDirectory() as folder:
        for n in args.sizes:
            for path in write_grid(Path(folder), n):
                segments, nodes, seconds, rss = measure(path)
                kind = "OSM PBF" if path.suffix == ".pbf" else "GeoPackage"
                print(f"| {kind} | {n}×{n} | {segments} | {nodes} | {seconds} | {rss} |")


if __name__ == "__main__":
    main()
