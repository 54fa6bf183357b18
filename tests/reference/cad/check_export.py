#!/usr/bin/env python3
"""Reads rfsite's coverage exports back with ezdxf (PyPI, 1.4.5 here) and checks them
against the exported grids.

Usage: check_export.py OUT_FOLDER

For every DXF layer `coverage-<floor>.<service>`:
  * the drawing passes ezdxf's audit with no error and nothing to fix;
  * every POLYLINE vertex lies on the straight line between two neighbouring grid points
    of `exports/<layer>.csv` (same row or column, one step apart), one at or above the
    required level and one below, and the linear interpolation of their levels at the
    vertex equals the required level (GeoJSON `required_dbm`) within 0.011 dB (the CSV
    gives each level exactly, positions to 1 mm);
  * every such straddling neighbour pair that borders a square of four grid points has a
    vertex (no crossing left out);
  * the SOLID rectangles cover exactly the grid cells below the required level.
Prints one JSON line of counts; exits 1 with the first failure otherwise.
"""
import csv
import json
import math
import sys
from pathlib import Path

import ezdxf

TOL_DB = 0.011
TOL_M = 0.0006  # the CSV gives coordinates to 1 mm


def read_grid(path):
    pts = {}
    with open(path, newline="") as f:
        for row in csv.DictReader(f):
            pts[(float(row["x_m"]), float(row["y_m"]))] = float(row["level_dbm"])
    xs = sorted({p[0] for p in pts})
    step = min(b - a for a, b in zip(xs, xs[1:]))
    x0 = xs[0]
    ys = sorted({p[1] for p in pts})
    y0 = ys[0]
    grid = {}
    for (x, y), v in pts.items():
        grid[(round((x - x0) / step), round((y - y0) / step))] = v
    return grid, x0, y0, step


def fail(msg):
    print(f"FAIL: {msg}")
    sys.exit(1)


def check_vertex(p, grid, x0, y0, step, req):
    """The neighbour pair whose crossing `p` is, or None."""
    fx, fy = (p[0] - x0) / step, (p[1] - y0) / step
    ix, iy = round(fx), round(fy)
    on_row = abs(fy - iy) * step < TOL_M
    on_col = abs(fx - ix) * step < TOL_M
    candidates = []
    if on_row:
        i = math.floor(fx)
        for a in (i, i - 1):
            candidates.append(((a, iy), (a + 1, iy), fx - a))
    if on_col:
        j = math.floor(fy)
        for b in (j, j - 1):
            candidates.append(((ix, b), (ix, b + 1), fy - b))
    for a, b, t in candidates:
        if a not in grid or b not in grid or t < -1e-3 or t > 1 + 1e-3:
            continue
        va, vb = grid[a], grid[b]
        if (va >= req) == (vb >= req):
            continue
        level = va + t * (vb - va)
        if abs(level - req) <= TOL_DB:
            return (a, b)
    return None


def straddling_pairs(grid, req):
    def square_ok(ix, iy):
        return all(k in grid for k in ((ix, iy), (ix + 1, iy), (ix, iy + 1), (ix + 1, iy + 1)))

    pairs = set()
    for (ix, iy), v in grid.items():
        for b in ((ix + 1, iy), (ix, iy + 1)):
            if b not in grid or (v >= req) == (grid[b] >= req):
                continue
            horizontal = b[1] == iy
            squares = [(ix, iy), (ix, iy - 1)] if horizontal else [(ix, iy), (ix - 1, iy)]
            if any(square_ok(*s) for s in squares):
                pairs.add(((ix, iy), b))
    return pairs


def main(out):
    out = Path(out)
    doc = ezdxf.readfile(out / "exports" / "coverage.dxf")
    geo = json.loads((out / "exports" / "coverage.geojson").read_text())
    required = {}
    for f in geo["features"]:
        pr = f["properties"]
        required[f"coverage-{pr['floor']}.{pr['service']}"] = pr["required_dbm"]
    audit = doc.audit()
    if audit.errors or audit.fixes:
        found = [m.message for m in list(audit.errors) + list(audit.fixes)]
        fail(f"ezdxf audit: {found[:3]}")
    msp = doc.modelspace()
    counts = {"layers": 0, "vertices": 0, "crossings": 0, "failing_cells": 0}
    for layer, req in sorted(required.items()):
        grid, x0, y0, step = read_grid(out / "exports" / f"{layer}.csv")
        found = set()
        for e in msp.query(f'POLYLINE[layer=="{layer}"]'):
            for p in e.points():
                pair = check_vertex(p, grid, x0, y0, step, req)
                if pair is None:
                    fail(f"{layer}: vertex {p} is not on a required-level crossing ({req} dBm)")
                found.add(pair)
                counts["vertices"] += 1
        missing = straddling_pairs(grid, req) - found
        if missing:
            fail(f"{layer}: {len(missing)} crossings without a vertex, e.g. {sorted(missing)[0]}")
        counts["crossings"] += len(found)
        area = 0.0
        for s in msp.query(f'SOLID[layer=="{layer}"]'):
            xs = [s.dxf.vtx0.x, s.dxf.vtx1.x, s.dxf.vtx2.x, s.dxf.vtx3.x]
            ys = [s.dxf.vtx0.y, s.dxf.vtx1.y, s.dxf.vtx2.y, s.dxf.vtx3.y]
            area += (max(xs) - min(xs)) * (max(ys) - min(ys))
        below = sum(1 for v in grid.values() if v < req)
        if abs(area - below * step * step) > 1e-6 * max(1.0, area):
            fail(f"{layer}: failing rectangles cover {area} m², the grid has {below} cells below")
        counts["failing_cells"] += below
        counts["layers"] += 1
    print(json.dumps(counts))


if __name__ == "__main__":
    main(sys.argv[1])
