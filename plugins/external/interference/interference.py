#!/usr/bin/env python3
"""rfsite external plugin `interference`: co-channel signal-to-interference ratio per point.

Protocol rfsite-plugin/1 (docs/external-plugins.md): one JSON request on stdin, one JSON
response on stdout, log lines on stderr. Python 3 standard library only.

Method. For every coverage layer of the prediction it runs after (multi-wall by default),
the wanted signal S at a point is the layer's predicted level from its best server. Every
other transmitter of the same service is a co-channel interferer when the site combines
transmitters as distinct cells (`combine = "strongest"`); with `power-sum` (a DAS carrying
one signal) only the declared external interferers count. An interferer's level is its
EIRP minus the ITU-R P.1238 site-general indoor path loss

    L = 20 log10(f_MHz) + N log10(d_m) + Lf(n) - 28 dB,  d >= 1 m,

with N the distance power loss coefficient and Lf(n) the floor penetration loss for n
floors between them. P.1238 gives no wall term, so interferers pass walls for free: their
levels are upper estimates and the SIR is a conservative (low) estimate. External
interferers (`interferers = [{ id, service, level_dbm, floors }]`) add a fixed level.
SIR = S - 10 log10(sum of interferer powers). A floor passes when the share of its graded
points with SIR >= `sir_target_db` reaches `target_fraction`.

Options ([plugins.<id>] keys besides the host's): sir_target_db (9), target_fraction
(the service's target_general), model (the layer model to read, "multi-wall"),
distance_power_loss_coefficient (30), floor_loss_first_db (15), floor_loss_next_db (4),
interferers ([]).
"""

import json
import math
import sys

PROTOCOL = "rfsite-plugin/1"
PLUGIN = "interference"


def log(msg):
    print(msg, file=sys.stderr)


def fail(msg, code=2):
    log("error: " + msg)
    sys.exit(code)


def number(opts, key, default):
    v = opts.get(key, default)
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        fail(f"option `{key}` must be a number, found {v!r}")
    return float(v)


def eirp_dbm(t):
    return t["power_dbm"] - t["cable_loss_db"] - t["connector_loss_db"] + t["antenna_gain_dbi"]


def p1238_loss_db(freq_mhz, d_m, floors_between, n_coeff, lf_first, lf_next):
    lf = 0.0 if floors_between == 0 else lf_first + lf_next * (floors_between - 1)
    return 20.0 * math.log10(freq_mhz) + n_coeff * math.log10(max(d_m, 1.0)) + lf - 28.0


def percentile(sorted_vals, q):
    if not sorted_vals:
        return float("nan")
    k = (len(sorted_vals) - 1) * q
    lo = math.floor(k)
    hi = min(lo + 1, len(sorted_vals) - 1)
    return sorted_vals[lo] + (sorted_vals[hi] - sorted_vals[lo]) * (k - lo)


def fmt(x):
    return "n/a" if x is None or not math.isfinite(x) else f"{x:.1f}"


def main():
    try:
        req = json.load(sys.stdin)
    except json.JSONDecodeError as e:
        fail(f"request is not JSON: {e}")
    if req.get("protocol") != PROTOCOL:
        fail(f"request speaks {req.get('protocol')!r}, this plugin speaks {PROTOCOL!r}")
    plugin = req.get("plugin", PLUGIN)
    site = req["site"]
    opts = req.get("options", {})
    earlier = req.get("earlier", {})

    sir_target = number(opts, "sir_target_db", 9.0)
    n_coeff = number(opts, "distance_power_loss_coefficient", 30.0)
    lf_first = number(opts, "floor_loss_first_db", 15.0)
    lf_next = number(opts, "floor_loss_next_db", 4.0)
    model = opts.get("model", "multi-wall")
    externals = opts.get("interferers", [])
    if not isinstance(externals, list):
        fail("option `interferers` must be a list of tables")

    floors = {f["id"]: f for f in site["floors"]}
    floor_index = {f["id"]: i for i, f in enumerate(site["floors"])}
    services = {s["id"]: s for s in site["services"]}
    distinct_cells = site["prediction"]["combine"] == "strongest"
    rx_h = site["prediction"]["receiver_height_m"]

    layers = [l for out in earlier.values() for l in out.get("layers", []) if l.get("model") == model]
    warnings = []
    if not layers:
        warnings.append({"plugin": plugin, "message": f"no `{model}` coverage layers reached the plugin: add \"{model}\" to its `after` list"})
    if not distinct_cells:
        warnings.append({"plugin": plugin, "message": "combine = \"power-sum\": transmitters carry one signal, so only the declared external interferers count"})
    warnings.append({"plugin": plugin, "message": "interferer levels use the ITU-R P.1238 site-general model without wall losses: the SIR is a conservative (low) estimate"})

    rows, findings, summary = [], [], []
    for layer in sorted(layers, key=lambda l: (l["service"], floor_index.get(l["floor"], 0))):
        svc = services.get(layer["service"])
        fl = floors.get(layer["floor"])
        if svc is None or fl is None:
            continue
        target_fraction = number(opts, "target_fraction", svc["target_general"])
        f_mhz = svc["freq_mhz"]
        g = layer["grid"]
        servers = layer.get("servers", [])
        txs = [t for t in site["transmitters"] if t["service"] == svc["id"]] if distinct_cells else []
        tx_by_id = {t["id"]: t for t in txs}
        # Receiver height above the building's datum on this floor.
        z_rx = fl["elevation_m"] + rx_h
        ext = [e for e in externals if e.get("service") == svc["id"] and (not e.get("floors") or fl["id"] in e.get("floors"))]
        ext_mw = sum(10 ** (float(e["level_dbm"]) / 10.0) for e in ext)
        sirs = []
        worst = None
        level = layer["level_dbm"]
        best = layer.get("best_server", [])
        for i, s_dbm in enumerate(level):
            if s_dbm is None:
                continue
            x = g["origin_x_m"] + (i % g["nx"] + 0.5) * g["step_m"]
            y = g["origin_y_m"] + (i // g["nx"] + 0.5) * g["step_m"]
            b = best[i] if i < len(best) else 65535
            serving = servers[b] if b < len(servers) else None
            i_mw = ext_mw
            for t in txs:
                if t["id"] == serving:
                    continue
                tf = floors.get(t["floor"])
                if tf is None:
                    continue
                z_tx = tf["elevation_m"] + t["height_m"]
                d = math.sqrt((x - t["position"][0]) ** 2 + (y - t["position"][1]) ** 2 + (z_rx - z_tx) ** 2)
                n_between = abs(floor_index[t["floor"]] - floor_index[fl["id"]])
                i_dbm = eirp_dbm(t) - p1238_loss_db(f_mhz, d, n_between, n_coeff, lf_first, lf_next)
                i_mw += 10 ** (i_dbm / 10.0)
            if i_mw <= 0.0:
                continue  # no interferer at all: no SIR limit here
            sir = s_dbm - 10.0 * math.log10(i_mw)
            sirs.append(sir)
            if worst is None or sir < worst[0]:
                worst = (sir, x, y)
        graded = sum(1 for v in level if v is not None)
        interferers = max(len(txs) - 1, 0) + len(ext)
        if graded == 0:
            continue
        below = sum(1 for s in sirs if s < sir_target)
        ok_fraction = 1.0 - below / graded
        s_sorted = sorted(sirs)
        med = percentile(s_sorted, 0.5) if s_sorted else None
        p05 = percentile(s_sorted, 0.05) if s_sorted else None
        rows.append([fl["id"], svc["id"], str(max(interferers, 0)), str(graded), fmt(med), fmt(p05), f"{100.0 * ok_fraction:.1f} %", "PASS" if ok_fraction >= target_fraction else "FAIL"])
        summary.append({"floor": fl["id"], "service": svc["id"], "points": graded, "median_sir_db": med, "p05_sir_db": p05, "fraction_at_target": ok_fraction})
        if ok_fraction < target_fraction and worst is not None:
            findings.append({
                "id": f"sir-{svc['id']}-{fl['id']}",
                "severity": "critical" if svc.get("life_safety") else "major",
                "floor": fl["id"],
                "service": svc["id"],
                "title": f"{fl['id']} {svc['name']}: co-channel interference, {100.0 * (1.0 - ok_fraction):.1f} % of the floor below {sir_target:.0f} dB SIR",
                "detail": (
                    f"Only {100.0 * ok_fraction:.1f} % of the graded points reach a signal-to-interference ratio of {sir_target:.1f} dB "
                    f"(target {100.0 * target_fraction:.0f} %); the median is {fmt(med)} dB. The lowest SIR, {worst[0]:.1f} dB, is at "
                    f"({worst[1]:.1f}, {worst[2]:.1f}) m. Interferer levels ignore walls, so the estimate is conservative behind walls."
                ),
                "plugin": plugin,
                "shortfall_db": round(sir_target - (p05 if p05 is not None else sir_target), 2),
                "location_m": [round(worst[1], 2), round(worst[2], 2)],
                "causes": ["overlapping co-channel cells of " + ", ".join(sorted(tx_by_id))],
                "remedies": [],
            })
        log(f"{fl['id']}/{svc['id']}: {graded} points, median SIR {fmt(med)} dB, {100.0 * ok_fraction:.1f} % >= {sir_target} dB")

    tables = []
    if rows:
        tables.append({
            "id": "interference-sir",
            "title": f"Co-channel signal-to-interference ratio (external plugin `{plugin}`, target {sir_target:.0f} dB)",
            "columns": ["Floor", "Service", "Interferers", "Points", "Median SIR (dB)", "5th percentile SIR (dB)", "Area at target", "Verdict"],
            "rows": rows,
        })
    out = {
        "findings": findings,
        "tables": tables,
        "warnings": warnings,
        "extra": {"sir_target_db": sir_target, "floors": summary},
    }
    json.dump({"protocol": PROTOCOL, "output": out}, sys.stdout, allow_nan=False, default=str)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
