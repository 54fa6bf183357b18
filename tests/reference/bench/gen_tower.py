#!/usr/bin/env python3
"""Generate examples/tower-20-floors/site.toml: a 20-storey synthetic office tower.

INVENTED: the building, the client, the people and every number are made up, to
exercise rfsite at scale (issue 6: a 20-floor site, report included, in under
10 s and 500 MB). Deterministic: the same script always writes the same file.

    python3 tests/reference/bench/gen_tower.py          # writes the example
    python3 tests/reference/bench/gen_tower.py --check  # exit 1 if it differs

Plan of every floor (60 m x 40 m, x east, y north, origin south-west corner):
  * long facades (y = 0, y = 40): coated curtain glazing in 1.5 m panels
    between concrete corner piers; short facades: concrete with clear windows;
  * a concrete core x 22-38, y 15-25: stairs S1 (west) and S2 (east), a lift
    lobby and three lift shafts; a corridor ring 2 m wide around it;
  * corridors y 11-13 and y 27-29 the full length; cellular rooms (3-5 m wide)
    between them and the long facades, a door per room;
  * open-plan wings west and east of the ring with desk screens and a glazed
    meeting room; level 01 has an open lobby instead of south rooms, level 20
    a metal-clad plant room in the east wing.
Services: public-safety 700 MHz (life safety) and LTE band 3. Per floor two
LTE antennas in the long corridors and one or two 700 MHz antennas in the ring.
"""
import random
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[3]
OUT = ROOT / "examples" / "tower-20-floors" / "site.toml"
SEED = 20260611
FLOORS = 20
W, D = 60.0, 40.0
STOREY_M = 3.6


def f(v):
    """A short, exact-looking decimal."""
    s = f"{round(v, 3):.3f}".rstrip("0").rstrip(".")
    return "0" if s in ("-0", "") else s


def pts(points):
    if isinstance(points, tuple) and not isinstance(points[0], (tuple, list)):
        return f"[{f(points[0])}, {f(points[1])}]"
    return "[" + ", ".join(f"[{f(x)}, {f(y)}]" for x, y in points) + "]"


class Site:
    def __init__(self):
        self.out = []

    def emit(self, text=""):
        self.out.append(text)

    def table(self, _table, **kv):
        self.emit(f"[[{_table}]]")
        for k, v in kv.items():
            if isinstance(v, bool):
                self.emit(f"{k} = {'true' if v else 'false'}")
            elif isinstance(v, (int, float)):
                self.emit(f"{k} = {f(v)}")
            elif isinstance(v, (list, tuple)):
                self.emit(f"{k} = {pts(v)}")
            else:
                self.emit(f'{k} = "{v}"')
        self.emit()

    def wall(self, floor, wid, material, thickness, points, closed=False):
        kv = dict(floor=floor, material=material, thickness=thickness, points=points)
        if wid:
            kv = dict(id=wid, **kv)
        if closed:
            kv["closed"] = True
        self.table("walls", **kv)

    def opening(self, wall, kind, material, offset, width):
        self.table("openings", wall=wall, kind=kind, material=material, offset=offset, width=width)


def room_splits(rng, x0, x1, lo=3.0, hi=5.0):
    xs = [x0]
    while True:
        nxt = xs[-1] + rng.uniform(lo, hi)
        if nxt > x1 - lo:
            break
        xs.append(round(nxt, 2))
    xs.append(x1)
    return xs


def floor_plan(s, rng, n):
    fid = f"L{n:02d}"
    # Facades: concrete corner piers, glazing panels on the long sides.
    for y, name in ((0.0, "south"), (D, "north")):
        panels = [(1.0 + 1.5 * k, y) for k in range(int((W - 2.0) / 1.5) + 1)]
        if panels[-1][0] < W - 1.0:
            panels.append((W - 1.0, y))
        s.wall(fid, f"{fid}-{name}", "coated-glazing", 0.03, panels)
    for x, name in ((0.0, "west"), (W, "east")):
        wid = f"{fid}-{name}"
        s.wall(fid, wid, "concrete-wall", 0.25, [(x + (1.0 if x == 0 else -1.0), 0.0), (x, 0.0), (x, D), (x + (1.0 if x == 0 else -1.0), D)])
        for off in (5.0, 17.0, 29.0):
            s.opening(wid, "window", "clear-glazing", 1.0 + off, 2.5)
    # Core with stairs, lift lobby and shafts.
    core = f"{fid}-core"
    s.wall(fid, core, "concrete-wall", 0.3, [(22, 15), (38, 15), (38, 25), (22, 25)], closed=True)
    s.opening(core, "door", "metal-door", 1.5, 1.0)  # stair S1
    s.opening(core, "door", "wooden-door", 6.0, 2.0)  # lift lobby
    s.opening(core, "door", "metal-door", 13.5, 1.0)  # stair S2
    s.wall(fid, None, "concrete-wall", 0.3, [(26, 15), (26, 25)])
    s.wall(fid, None, "concrete-wall", 0.3, [(34, 15), (34, 25)])
    s.wall(fid, None, "concrete-wall", 0.2, [(26, 19), (34, 19)])
    for k, (x0, x1) in enumerate(((26.15, 28.52), (28.82, 31.18), (31.48, 33.85))):
        s.wall(fid, f"{fid}-shaft{k + 1}", "elevator-shaft", 0.2, [(x0, 19.15), (x1, 19.15), (x1, 24.85), (x0, 24.85)], closed=True)
    # Corridor ring around the core.
    for name, a, b, doors in (
        ("ring-s", (20, 13), (40, 13), (7.0, 12.0)),
        ("ring-n", (20, 27), (40, 27), (4.0, 14.0)),
        ("ring-w", (20, 13), (20, 27), (3.0, 9.5)),
        ("ring-e", (40, 13), (40, 27), (3.0, 9.5)),
    ):
        wid = f"{fid}-{name}"
        s.wall(fid, wid, "plasterboard-partition", 0.1, [a, b])
        for off in doors:
            s.opening(wid, "door", "wooden-door", off + rng.uniform(-0.5, 0.5), 1.0)
    # Long corridors and the rooms between them and the facades.
    for side, y_corr, y_face in (("s", 11.0, 0.0), ("n", 29.0, D)):
        wid = f"{fid}-corr-{side}"
        s.wall(fid, wid, "plasterboard-partition", 0.1, [(0, y_corr), (W, y_corr)])
        if n == 1 and side == "s":
            # Ground-floor lobby: one open space behind the south glazing.
            for off in (8.0, 29.0, 50.0):
                s.opening(wid, "door", "clear-glazing", off, 3.0)
            continue
        xs = room_splits(rng, 0.0, W)
        for x in xs[1:-1]:
            s.wall(fid, None, "plasterboard-partition", 0.1, [(x, y_corr), (x, y_face)])
        for x0, x1 in zip(xs, xs[1:]):
            if x1 - x0 > 2.0:
                s.opening(wid, "door", "wooden-door", rng.uniform(x0 + 0.3, x1 - 1.3), 1.0)
    # Open-plan wings: desk screens and a glazed meeting room.
    for wing, (x0, x1) in (("w", (0.5, 19.5)), ("e", (40.5, 59.5))):
        if n == FLOORS and wing == "e":
            s.wall(fid, f"{fid}-plant", "metal-cladding", 0.1, [(44, 14), (56, 14), (56, 26), (44, 26)], closed=True)
            s.opening(f"{fid}-plant", "door", "metal-door", 5.0, 1.5)
            continue
        mx = rng.uniform(x0 + 1.0, x1 - 7.0)
        room = f"{fid}-meet-{wing}"
        s.wall(fid, room, "glass", 0.02, [(mx, 21.5), (mx + 6, 21.5), (mx + 6, 26.5), (mx, 26.5)], closed=True)
        s.opening(room, "door", "wooden-door", 2.5, 1.0)
        for _ in range(rng.randint(22, 30)):
            x = rng.uniform(x0, x1 - 1.6)
            y = rng.uniform(13.6, 20.8)
            if rng.random() < 0.5:
                s.wall(fid, None, "plasterboard-partition", 0.05, [(x, y), (x + rng.uniform(1.2, 1.6), y)])
            else:
                s.wall(fid, None, "plasterboard-partition", 0.05, [(x, y), (x, y + rng.uniform(0.6, 1.2))])
    return fid


def main():
    rng = random.Random(SEED)
    s = Site()
    s.emit("# =============================================================================")
    s.emit("#  Halvard Street Tower: a 20-storey synthetic office tower for rfsite")
    s.emit("#")
    s.emit("#  INVENTED: building, client, people and every number are made up. GENERATED by")
    s.emit("#  tests/reference/bench/gen_tower.py (deterministic); edit the script, not this")
    s.emit("#  file. It exists to exercise prediction and reporting at scale (issue 6).")
    s.emit("#")
    s.emit("#  Check it:   rfsite check examples/tower-20-floors")
    s.emit("#  Report it:  rfsite report examples/tower-20-floors -o OUT")
    s.emit("# =============================================================================")
    s.emit()
    s.emit("[site]")
    s.emit('id = "tower-20-floors"')
    s.emit('name = "Halvard Street Tower"')
    s.emit('client = "Halvard Estates"               # invented')
    s.emit('address = "88 Halvard Street, Wrenmouth"  # invented')
    s.emit('author = "Ines Falkwood"                  # invented')
    s.emit('reviewer = "Oskar Brandvik"               # invented')
    s.emit('report_date = "2026-12-04"')
    s.emit('revision = "A"')
    s.emit('units = "metres"')
    s.emit('building = "thermally-efficient"')
    s.emit()
    s.emit("[prediction]")
    s.emit("grid_step = 0.5")
    s.emit("receiver_height = 1.5")
    s.emit('combine = "strongest"')
    s.emit("shadowing_sigma_db = 6")
    s.emit()
    s.table("services", id="ps700", name="Public-safety 700 MHz", freq_mhz=770.0, threshold_dbm=-95.0,
            target_general=0.95, target_critical=0.99, design_margin_db=5.0, life_safety=True)
    s.table("services", id="lte1800", name="Cellular LTE band 3", freq_mhz=1842.5, threshold_dbm=-105.0,
            target_general=0.95, target_critical=0.99, design_margin_db=3.0)
    outline = [(0, 0), (W, 0), (W, D), (0, D)]
    for n in range(1, FLOORS + 1):
        s.table("floors", id=f"L{n:02d}", name=f"Level {n:02d}", elevation=(n - 1) * STOREY_M,
                height=STOREY_M, slab_material="concrete-floor-slab", slab_thickness=0.25, outline=outline)
    for n in range(1, FLOORS + 1):
        fid = floor_plan(s, rng, n)
        for zid, name, kind, poly in (
            ("stair-s1", "Stair S1", "critical", [(22, 15), (26, 15), (26, 25), (22, 25)]),
            ("stair-s2", "Stair S2", "critical", [(34, 15), (38, 15), (38, 25), (34, 25)]),
            ("lobby", "Lift lobby", "critical", [(26, 15), (34, 15), (34, 19), (26, 19)]),
            ("shafts", "Lift shafts", "excluded", [(26.15, 19.15), (33.85, 19.15), (33.85, 24.85), (26.15, 24.85)]),
        ):
            s.table("zones", id=f"{fid}-{zid}", floor=fid, name=name, kind=kind, polygon=poly)
        for k, x in enumerate((rng.uniform(8, 14), rng.uniform(46, 52))):
            y = 12.0 if k == 0 else 28.0
            s.table("transmitters", id=f"LTE-{fid}-{'WE'[k]}", service="lte1800", floor=fid, position=(x, y),
                    height=2.9, power_dbm=15.0, cable_loss_db=3.0, connector_loss_db=0.5, antenna_gain_dbi=2.0,
                    pattern="omni-ceiling")
        ps = [(21.0, rng.uniform(16.0, 24.0))] + ([(39.0, rng.uniform(16.0, 24.0))] if n % 2 == 0 else [])
        for k, (x, y) in enumerate(ps):
            s.table("transmitters", id=f"PS-{fid}-{'WE'[k]}", service="ps700", floor=fid, position=(x, y),
                    height=2.9, power_dbm=12.0, cable_loss_db=3.0, connector_loss_db=0.5, antenna_gain_dbi=2.0,
                    pattern="omni-ceiling")
    text = "\n".join(s.out).rstrip() + "\n"
    if "--check" in sys.argv:
        same = OUT.exists() and OUT.read_text() == text
        print("up to date" if same else f"{OUT} differs from the generator")
        sys.exit(0 if same else 1)
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(text)
    print(f"wrote {OUT} ({len(text)} bytes)")


if __name__ == "__main__":
    main()
