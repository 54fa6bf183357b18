"""Writes the DXF fixtures for rfsite's plan importer with the PyPI package ezdxf.

An invented plan (the "Ashgrove depot office", 20 m x 12 m) drawn the way architects draw:
double-line walls with gaps at the doors, door blocks (a leaf and its swing arc) inserted at
the hinge, one nested and rotated (a door set holding the door), one mirrored, a single-line
wall, background furniture with circles and a bulged polyline, text, and an unmapped grid
layer. The same plan is written in millimetres, metres and inches ($INSUNITS 4, 6, 1); the
walls' centrelines, thicknesses and door positions it was drawn from go to expected.json.
A copy of the millimetre drawing with one coordinate corrupted tests the error line.

Run: python3 make_fixtures.py   (ezdxf 1.4.5 made the committed files)
"""

import json
import ezdxf

EXT = 0.300   # exterior wall thickness, m
PART = 0.100  # partition thickness, m
W, H = 20.0, 12.0


def walls_and_doors():
    """The plan as drawn: face lines per layer (metres) and door inserts."""
    lines = {"A-WALL-EXT": [], "A-WALL-INT": []}
    t = EXT
    ext = lines["A-WALL-EXT"]
    # South wall with a 1.0 m door gap at x 9..10 (outer face y=0, inner y=0.3), jamb caps.
    ext += [((0, 0), (9, 0)), ((10, 0), (W, 0)), ((t, t), (9, t)), ((10, t), (W - t, t))]
    ext += [((9, 0), (9, t)), ((10, 0), (10, t))]
    # North wall with a 0.9 m door gap at x 14..14.9.
    ext += [((0, H), (14, H)), ((14.9, H), (W, H)), ((t, H - t), (14, H - t)),
            ((14.9, H - t), (W - t, H - t))]
    ext += [((14, H - t), (14, H)), ((14.9, H - t), (14.9, H))]
    # West and east walls, each face split in two pieces (as CAD often leaves them).
    ext += [((0, 0), (0, 5)), ((0, 5), (0, H)), ((t, t), (t, H - t))]
    ext += [((W, 0), (W, H)), ((W - t, t), (W - t, 7)), ((W - t, 7), (W - t, H - t))]
    # Partition at x = 8 (faces 7.95 / 8.05) from the inner face of the south wall to the
    # north wall, with a 0.9 m door gap at y 5..5.9.
    p = lines["A-WALL-INT"]
    p += [((7.95, t), (7.95, 5)), ((8.05, t), (8.05, 5)),
          ((7.95, 5.9), (7.95, H - t)), ((8.05, 5.9), (8.05, H - t))]
    p += [((7.95, 5), (8.05, 5)), ((7.95, 5.9), (8.05, 5.9))]
    single = [((8.05, 6.0), (W - t, 6.0))]  # a single-line partition, mapped 0.1 m
    doors = [
        # block, insertion point (hinge), rotation, x scale, y scale
        ("DOOR-1000", (9.0, t), 0.0, 1.0, 1.0),
        ("DOOR-SET-900", (7.95, 5.0), 90.0, 1.0, 1.0),
        ("DOOR-900", (14.0, H - t), 0.0, 1.0, -1.0),
    ]
    return lines, single, doors


def expected():
    c = EXT / 2
    walls = [
        {"layer": "A-WALL-EXT", "a": [c, c], "b": [W - c, c], "thickness": EXT},
        {"layer": "A-WALL-EXT", "a": [c, H - c], "b": [W - c, H - c], "thickness": EXT},
        {"layer": "A-WALL-EXT", "a": [c, c], "b": [c, H - c], "thickness": EXT},
        {"layer": "A-WALL-EXT", "a": [W - c, c], "b": [W - c, H - c], "thickness": EXT},
        {"layer": "A-WALL-INT", "a": [8.0, c], "b": [8.0, H - c], "thickness": PART},
        {"layer": "A-WALL-SINGLE", "a": [8.0, 6.0], "b": [W - c, 6.0], "thickness": PART},
    ]
    doors = [
        {"wall": 0, "from": [9.0, c], "width": 1.0},
        {"wall": 4, "from": [8.0, 5.0], "width": 0.9},
        {"wall": 1, "from": [14.0, H - c], "width": 0.9},
    ]
    return {"walls": walls, "doors": doors}


def define_blocks(doc, k):
    """Door blocks in drawing units (k drawing units per metre)."""
    for name, w in (("DOOR-900", 0.9), ("DOOR-1000", 1.0)):
        b = doc.blocks.new(name=name)
        b.add_line((0, 0), (0, w * k))               # the leaf, open at 90 degrees
        b.add_arc((0, 0), w * k, 0, 90)               # its swing
    s = doc.blocks.new(name="DOOR-SET-900")
    s.add_blockref("DOOR-900", (0, 0))                # nested
    s.add_line((0, -0.05 * k), (0.9 * k, -0.05 * k))  # the frame line, on the centreline


def draw(units_code, k, path):
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = units_code
    define_blocks(doc, k)
    msp = doc.modelspace()
    lines, single, doors = walls_and_doors()
    for layer, segs in lines.items():
        for a, b in segs:
            msp.add_line((a[0] * k, a[1] * k), (b[0] * k, b[1] * k), dxfattribs={"layer": layer})
    for a, b in single:
        msp.add_line((a[0] * k, a[1] * k), (b[0] * k, b[1] * k), dxfattribs={"layer": "A-WALL-SINGLE"})
    for name, at, rot, sx, sy in doors:
        msp.add_blockref(name, (at[0] * k, at[1] * k), dxfattribs={
            "layer": "A-DOOR", "rotation": rot, "xscale": sx, "yscale": sy})
    # Background: a round table, a curved reception counter (bulged polyline), text, grid.
    msp.add_circle((4 * k, 8 * k), 0.6 * k, dxfattribs={"layer": "A-FURN"})
    msp.add_lwpolyline([(12 * k, 2 * k, 0.5), (15 * k, 2 * k, 0)], dxfattribs={"layer": "A-FURN"})
    msp.add_text("RECEPTION", dxfattribs={"layer": "A-TEXT", "height": 0.2 * k}).set_placement((12 * k, 3 * k))
    for x in (0, 8, 16):
        msp.add_line((x * k, -1 * k), (x * k, (H + 1) * k), dxfattribs={"layer": "S-GRID"})
    doc.saveas(path)


def corrupt(src, dst):
    """Copies `src` with the first LINE's start x replaced by a non-number; returns the
    1-based line of the bad value."""
    text = open(src, encoding="utf-8").read().split("\n")
    in_entities = False
    for i, l in enumerate(text):
        if l.strip() == "ENTITIES":
            in_entities = True
        if in_entities and l.strip() == "LINE":
            j = i
            while text[j].strip() != "10":
                j += 1
            text[j + 1] = "9x00"
            open(dst, "w", encoding="utf-8").write("\n".join(text))
            return j + 2
    raise RuntimeError("no LINE found")


if __name__ == "__main__":
    draw(4, 1000.0, "plan-mm.dxf")
    draw(6, 1.0, "plan-m.dxf")
    draw(1, 1.0 / 0.0254, "plan-in.dxf")
    exp = expected()
    exp["malformed_line"] = corrupt("plan-mm.dxf", "plan-malformed.dxf")
    exp["ezdxf_version"] = ezdxf.__version__
    with open("expected.json", "w") as f:
        json.dump(exp, f, indent=1)
