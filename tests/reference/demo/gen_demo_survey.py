#!/usr/bin/env python3
"""Generates the INVENTED walk-test CSVs of the Kestrel Quay Clinic demo site.

    python3 tests/reference/demo/gen_demo_survey.py

writes examples/kestrel-quay-clinic/survey/{L0-ps700,L1-ps700,L1-lte1800}.csv.

Nothing here is a measurement. The "measured" level at each walk point is a deliberately
simple stand-in for a real building, computed from the same coordinates as site.toml
(read with tomllib, standard library only):

  * free-space loss (ITU-R P.525 form: 20 log10 d_m + 20 log10 f_MHz - 27.55) over the
    3D distance from every antenna of the service, from its EIRP;
  * plus a fixed loss for every wall, door or window the straight 2D line crosses on the
    receiver's floor (segment intersection, openings cut out of their walls);
  * plus a fixed loss per floor slab crossed (antennas on other floors);
  * the antennas of a service are power-summed (a walk-test receiver sees them all), and
    the outdoor donor adds a little through the south facade;
  * Gaussian noise, sigma 4 dB, from a fixed seed.

The "real building" differs from the rfsite material library on purpose, so that a later
calibration has something to find: the real coated glazing is 3 dB worse than the library
and the real plasterboard partitions 1.5 dB worse (steel studs, double boarding).

The script is deterministic: the same site.toml and seed give byte-identical files.
"""

import math
import random
import tomllib
from pathlib import Path

SEED = 20261120
NOISE_SIGMA_DB = 4.0

ROOT = Path(__file__).resolve().parents[3]
SITE_DIR = ROOT / "examples" / "kestrel-quay-clinic"

# Loss per crossing of the stand-in "real building", dB, at (770 MHz, 1842.5 MHz).
# Roughly the library values (`rfsite materials`) ...
TRUE_LOSS_DB = {
    "plasterboard-partition": (3.9, 4.8),
    "wooden-door": (4.9, 5.1),
    "brick-wall": (5.6, 7.4),
    "concrete-wall": (8.1, 12.4),
    "clear-glazing": (2.2, 2.4),
    "coated-glazing": (23.2, 23.5),
    "elevator-shaft": (28.2, 31.9),
    "metal-cladding": (30.2, 33.9),
    "metal-door": (20.3, 24.7),
}
# ... and the deliberate differences (the "truth" a calibration should recover).
BIAS_DB = {
    "coated-glazing": 3.0,
    "plasterboard-partition": 1.5,
}
SLAB_LOSS_DB = (15.2, 18.5)  # per concrete slab crossed

# Walk paths per floor: waypoints in metres, walked at one reading per STEP_M.
STEP_M = 1.25


def corridor_walk(extra_north):
    """Corridor west -> east along y = 14.5, then back east -> west with a detour through
    each south room door (into the room and out again) and the given north detours
    (outbound waypoints, retraced on the way back)."""
    pts = [(1.5, 14.5), (46.5, 14.5)]
    south_doors = [43.5, 35.5, 27.5, 19.5, 11.5, 3.5]
    north = dict(extra_north)
    for x in sorted(set(south_doors) | set(north), reverse=True):
        pts.append((x, 14.5))
        if x in south_doors:
            pts += [(x, 6.0), (x, 14.5)]
        if x in north:
            # Out along the detour and back the same way (walkers use the doors).
            pts += north[x] + north[x][-2::-1] + [(x, 14.5)]
    pts.append((1.5, 14.5))
    return pts


WALKS = {
    # L0: fire command room (door x 3-4), security office, staff room via the west wing.
    "L0": corridor_walk({
        3.5: [(3.5, 20.0), (5.5, 21.5)],
        17.0: [(17.0, 24.0), (19.5, 28.0), (21.0, 28.0), (28.5, 28.0)],
        22.0: [(22.0, 19.0), (21.0, 24.5)],
        33.0: [(33.0, 24.0)],
    }),
    # L1: into the stair (door x 21.5-22.5) up to its far north-east corner, the lobby,
    # and the north rooms.
    "L1": corridor_walk({
        3.5: [(3.5, 24.0)],
        10.5: [(10.5, 26.0)],
        17.0: [(17.0, 24.0), (19.5, 28.0), (21.0, 28.0), (28.5, 28.0)],
        22.0: [(22.0, 19.0), (21.0, 24.5), (24.3, 25.5)],
        27.5: [(27.5, 19.5)],
        33.0: [(33.0, 25.0)],
        45.0: [(45.0, 26.0)],
    }),
}

HEADER = "timestamp,x,y,floor,service,level_dbm,channel"
CHANNEL = {"ps700": "PS-12", "lte1800": "1575"}


# ----------------------------------------------------------------------------- geometry
def seg_cross(p, q, a, b):
    """True when segment p-q properly crosses segment a-b."""
    def orient(o, u, v):
        return (u[0] - o[0]) * (v[1] - o[1]) - (u[1] - o[1]) * (v[0] - o[0])
    d1, d2 = orient(a, b, p), orient(a, b, q)
    d3, d4 = orient(p, q, a), orient(p, q, b)
    return (d1 * d2 < 0) and (d3 * d4 < 0)


def point_in_polygon(pt, poly):
    x, y = pt
    inside = False
    n = len(poly)
    for i in range(n):
        (x1, y1), (x2, y2) = poly[i], poly[(i + 1) % n]
        if (y1 > y) != (y2 > y):
            xc = x1 + (y - y1) * (x2 - x1) / (y2 - y1)
            if xc > x:
                inside = not inside
    return inside


def wall_parts(site):
    """Wall polylines split into parts, openings cut out with their own material.
    Returns {floor: [(a, b, material), ...]}."""
    ops = {}
    for o in site.get("openings", []):
        ops.setdefault(o["wall"], []).append((o["offset"], o["offset"] + o["width"], o["material"]))
    out = {}
    for w in site.get("walls", []):
        pts = [tuple(p) for p in w["points"]]
        if w.get("closed"):
            pts.append(pts[0])
        cuts = sorted(ops.get(w.get("id", ""), []))
        s0 = 0.0
        for a, b in zip(pts, pts[1:]):
            length = math.dist(a, b)
            s1 = s0 + length
            marks = sorted({s0, s1} | {c for o in cuts for c in o[:2] if s0 < c < s1})
            for c0, c1 in zip(marks, marks[1:]):
                mid = 0.5 * (c0 + c1)
                mat = next((m for (o0, o1, m) in cuts if o0 < mid < o1), w["material"])
                t0, t1 = (c0 - s0) / length, (c1 - s0) / length
                pa = (a[0] + t0 * (b[0] - a[0]), a[1] + t0 * (b[1] - a[1]))
                pb = (a[0] + t1 * (b[0] - a[0]), a[1] + t1 * (b[1] - a[1]))
                out.setdefault(w["floor"], []).append((pa, pb, mat))
            s0 = s1
    return out


# ----------------------------------------------------------------------------- the stand-in model
def loss_of(material, band):
    return TRUE_LOSS_DB[material][band] + BIAS_DB.get(material, 0.0)


def fspl_db(freq_mhz, d_m):
    return 20 * math.log10(max(d_m, 1.0)) + 20 * math.log10(freq_mhz) - 27.55


def true_level(site, parts, elev, floor, service, x, y):
    svc = next(s for s in site["services"] if s["id"] == service)
    band = 0 if svc["freq_mhz"] < 1000 else 1
    rx_h = site["prediction"]["receiver_height"]
    total_mw = 0.0
    floor_ids = [f["id"] for f in site["floors"]]
    for t in site["transmitters"]:
        if t["service"] != service:
            continue
        eirp = t["power_dbm"] - t["cable_loss_db"] - t["connector_loss_db"] + t["antenna_gain_dbi"]
        tx, ty = t["position"]
        dz = (elev[floor] + rx_h) - (elev[t["floor"]] + t["height"])
        d = math.sqrt((x - tx) ** 2 + (y - ty) ** 2 + dz ** 2)
        walls = sum(loss_of(m, band) for (a, b, m) in parts.get(floor, [])
                    if seg_cross((tx, ty), (x, y), a, b))
        slabs = abs(floor_ids.index(floor) - floor_ids.index(t["floor"])) * SLAB_LOSS_DB[band]
        total_mw += 10 ** ((eirp - fspl_db(svc["freq_mhz"], d) - walls - slabs) / 10)
    # The outdoor donor, straight in through the south facade.
    for dn in site.get("donors", []):
        if dn["service"] != service:
            continue
        walls = sum(loss_of(m, band) for (a, b, m) in parts.get(floor, [])
                    if seg_cross((x, -0.5), (x, y), a, b))
        total_mw += 10 ** ((dn["level_dbm"] - walls - 0.5 * y) / 10)
    return 10 * math.log10(total_mw) if total_mw > 0 else -200.0


def walk_points(waypoints):
    out = []
    for a, b in zip(waypoints, waypoints[1:]):
        n = max(1, int(round(math.dist(a, b) / STEP_M)))
        for i in range(n):
            t = i / n
            out.append((a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])))
    out.append(waypoints[-1])
    return out


def write_csv(site, parts, elev, floor, service, rng, start_s, bad_rows=False):
    outline = next(f["outline"] for f in site["floors"] if f["id"] == floor)
    rows = []
    t = start_s
    for (x, y) in walk_points(WALKS[floor]):
        assert point_in_polygon((x, y), outline), (floor, x, y)
        level = true_level(site, parts, elev, floor, service, x, y) + rng.gauss(0.0, NOISE_SIGMA_DB)
        t += 1 + rng.randrange(2)
        rows.append([timestamp(t), f"{x:.2f}", f"{y:.2f}", floor, service, f"{level:.1f}", CHANNEL[service]])
    if bad_rows:
        # Exactly four deliberately bad rows, to show how the reader counts rejections.
        rows[20][5] = ""                 # missing level
        rows[60][5] = "n/a"              # not a number
        rows[100][1] = "200.00"          # off the floor outline
        rows[140][4] = "tetra400"        # a service the site does not have
    name = f"{floor}-{service}.csv"
    path = SITE_DIR / "survey" / name
    path.parent.mkdir(parents=True, exist_ok=True)
    with open(path, "w", newline="\n") as fh:
        fh.write(f"# INVENTED demo data generated by tests/reference/demo/gen_demo_survey.py (seed {SEED}); not a measurement\n")
        fh.write("# Kestrel Quay Clinic walk test (fictional): receiver at 1.5 m, positions in metres on the site plan\n")
        fh.write(HEADER + "\n")
        for r in rows:
            fh.write(",".join(r) + "\n")
    return path, len(rows)


def timestamp(s):
    h, rem = divmod(s, 3600)
    m, sec = divmod(rem, 60)
    return f"2026-11-12T{h:02d}:{m:02d}:{sec:02d}"


def main():
    site = tomllib.loads((SITE_DIR / "site.toml").read_text())
    parts = wall_parts(site)
    elev = {f["id"]: f["elevation"] for f in site["floors"]}
    rng = random.Random(SEED)
    jobs = [
        ("L0", "ps700", 10 * 3600, False),
        ("L1", "ps700", 11 * 3600, True),
        ("L1", "lte1800", 11 * 3600 + 1800, False),
    ]
    for floor, service, start, bad in jobs:
        path, n = write_csv(site, parts, elev, floor, service, rng, start, bad)
        print(f"{path.relative_to(ROOT)}: {n} rows")


if __name__ == "__main__":
    main()
