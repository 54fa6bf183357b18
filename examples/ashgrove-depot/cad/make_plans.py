"""Draws the two floors of the invented Ashgrove Depot office as DXF, with the PyPI package
ezdxf, the way an architect's drawing comes: millimetres, double-line walls broken at doors
and windows, door blocks (leaf and swing arc) at the hinge, window blocks across the wall,
a nested and rotated door set, a curved counter, furniture, text and a structural grid.

INVENTED DEMO: the building and every dimension are made up.
Run: python3 make_plans.py   (writes ground.dxf and first.dxf; ezdxf 1.4.5 made them)
"""

import ezdxf

K = 1000.0           # millimetres per metre
W, H = 30.0, 14.0    # outline, m
EXT, PART = 0.30, 0.10


def gapped(y, x0, x1, gaps):
    """Pieces of the line y from x0 to x1 with `gaps` [(a, b)] left open."""
    out, x = [], x0
    for a, b in sorted(gaps):
        out.append(((x, y), (a, y)))
        x = b
    out.append(((x, y), (x1, y)))
    return out


def flip(segs):
    return [((a[1], a[0]), (b[1], b[0])) for a, b in segs]


def exterior(south_gaps, north_gaps):
    t = EXT
    s = gapped(0, 0, W, south_gaps) + gapped(t, t, W - t, south_gaps)
    n = gapped(H, 0, W, north_gaps) + gapped(H - t, t, W - t, north_gaps)
    caps = [((a, y0), (a, y0 + t)) for g in south_gaps for a in g for y0 in [0]]
    caps += [((a, H - t), (a, H)) for g in north_gaps for a in g]
    ends = [((0, 0), (0, H)), ((t, t), (t, H - t)), ((W, 0), (W, H)), ((W - t, t), (W - t, H - t))]
    return s + n + caps + ends


def partition(x, y0, y1, gaps):
    """A 100 mm partition along x from y0 to y1, broken at `gaps`."""
    h = PART / 2
    return flip(gapped(x - h, y0, y1, gaps) + gapped(x + h, y0, y1, gaps)) + \
        [((x - h, a), (x + h, a)) for g in gaps for a in g]


def blocks(doc):
    for name, w in (("DOOR-900", 0.9), ("DOOR-1000", 1.0)):
        b = doc.blocks.new(name=name)
        b.add_line((0, 0), (0, w * K))
        b.add_arc((0, 0), w * K, 0, 90)
    s = doc.blocks.new(name="DOOR-SET-900")
    s.add_blockref("DOOR-900", (0, 0))
    s.add_line((0, -0.05 * K), (0.9 * K, -0.05 * K))
    win = doc.blocks.new(name="WIN-2000")
    win.add_lwpolyline([(0, 0), (2 * K, 0), (2 * K, EXT * K), (0, EXT * K)], close=True)
    win.add_line((0, EXT * K / 2), (2 * K, EXT * K / 2))


def floor(path, windows_south, windows_north, doors, parts, singles, counter):
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 4
    blocks(doc)
    m = doc.modelspace()
    south = [d for d in doors if d[3] == "S"]
    gaps_s = [(x, x + 2.0) for x in windows_south] + [(d[1][0], d[1][0] + d[4]) for d in south]
    gaps_n = [(x, x + 2.0) for x in windows_north]
    add = lambda segs, layer: [m.add_line((a[0] * K, a[1] * K), (b[0] * K, b[1] * K), dxfattribs={"layer": layer}) for a, b in segs]
    add(exterior(gaps_s, gaps_n), "A-WALL-EXT")
    for x, y0, y1, gaps in parts:
        add(partition(x, y0, y1, gaps), "A-WALL-INT")
    add(singles, "A-WALL-GLASS")
    for x in windows_south:
        m.add_blockref("WIN-2000", (x * K, 0), dxfattribs={"layer": "A-GLAZ"})
    for x in windows_north:
        m.add_blockref("WIN-2000", (x * K, (H - EXT) * K), dxfattribs={"layer": "A-GLAZ"})
    for name, at, rot, _side, _w in doors:
        m.add_blockref(name, (at[0] * K, at[1] * K), dxfattribs={"layer": "A-DOOR", "rotation": rot})
    m.add_lwpolyline([(counter[0] * K, counter[1] * K, 0.6), ((counter[0] + 4) * K, counter[1] * K, 0)], dxfattribs={"layer": "A-FURN"})
    for c in ((5, 10), (5, 4), (24, 10)):
        m.add_circle((c[0] * K, c[1] * K), 0.6 * K, dxfattribs={"layer": "A-FURN"})
    m.add_text("ASHGROVE DEPOT", dxfattribs={"layer": "A-TEXT", "height": 300}).set_placement((12 * K, 7 * K))
    for x in (0, 10, 20, 30):
        m.add_line((x * K, -1 * K), (x * K, (H + 1) * K), dxfattribs={"layer": "S-GRID"})
    doc.saveas(path)


if __name__ == "__main__":
    t = EXT
    # Ground: entrance in the south wall, a partition at x = 10 with a nested door set, a
    # glazed single-line screen, a curved reception counter.
    floor("ground.dxf", windows_south=[3, 20, 25], windows_north=[4, 14, 24],
          doors=[("DOOR-1000", (14.0, t), 0.0, "S", 1.0), ("DOOR-SET-900", (9.95, 6.0), 90.0, "P", 0.9)],
          parts=[(10.0, t, H - t, [(6.0, 6.9)]), (20.0, t, H - t, [(8.0, 8.9)])],
          singles=[((20.05, 5.0), (W - t, 5.0))], counter=(13, 3))
    # First: offices off a corridor; two partitions, one more door.
    floor("first.dxf", windows_south=[3, 9, 15, 21, 25], windows_north=[4, 14, 24],
          doors=[("DOOR-SET-900", (9.95, 6.0), 90.0, "P", 0.9), ("DOOR-SET-900", (19.95, 8.0), 90.0, "P", 0.9)],
          parts=[(10.0, t, H - t, [(6.0, 6.9)]), (20.0, t, H - t, [(8.0, 8.9)])],
          singles=[], counter=(24, 3))
