#!/usr/bin/env python3
"""Writes an INVENTED background plan image for the demo's ground floor
(examples/kestrel-quay-clinic/plans/L0.png): a pale drawing of the walls in
site.toml on a 0.5 m drafting grid, 0.05 m per pixel, lower-left corner at the
site origin. Standard library only; deterministic."""
import struct, tomllib, zlib, pathlib

root = pathlib.Path(__file__).resolve().parents[3]
site = tomllib.loads((root / "examples/kestrel-quay-clinic/site.toml").read_text())
floor = next(f for f in site["floors"] if f["id"] == "L0")
xs = [p[0] for p in floor["outline"]]; ys = [p[1] for p in floor["outline"]]
SCALE = 0.05  # metres per pixel
W, H = int(max(xs) / SCALE) + 1, int(max(ys) / SCALE) + 1
img = [[(252, 250, 245)] * W for _ in range(H)]

def put(x, y, c):
    if 0 <= x < W and 0 <= y < H:
        img[H - 1 - y][x] = c

for gx in range(0, W, int(0.5 / SCALE)):
    for y in range(H):
        put(gx, y, (232, 230, 222))
for gy in range(0, H, int(0.5 / SCALE)):
    for x in range(W):
        put(x, gy, (232, 230, 222))

def line(a, b, c, width=2):
    x0, y0 = a[0] / SCALE, a[1] / SCALE
    x1, y1 = b[0] / SCALE, b[1] / SCALE
    n = int(max(abs(x1 - x0), abs(y1 - y0))) + 1
    for i in range(n + 1):
        t = i / n
        x, y = round(x0 + t * (x1 - x0)), round(y0 + t * (y1 - y0))
        for dx in range(-width, width + 1):
            for dy in range(-width, width + 1):
                put(x + dx, y + dy, c)

for w in site.get("walls", []):
    if w.get("floor") != "L0":
        continue
    pts = w["points"] + ([w["points"][0]] if w.get("closed") else [])
    for a, b in zip(pts, pts[1:]):
        line(a, b, (150, 146, 136))

raw = b"".join(b"\x00" + bytes(v for px in row for v in px) for row in img)
def chunk(kind, data):
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)
png = b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", W, H, 8, 2, 0, 0, 0)) + chunk(b"IDAT", zlib.compress(raw, 9)) + chunk(b"IEND", b"")
out = root / "examples/kestrel-quay-clinic/plans/L0.png"
out.write_bytes(png)
print(f"wrote {out} ({W}x{H} px, {len(png)} bytes)")
