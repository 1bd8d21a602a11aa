#!/usr/bin/env python3
"""Makes the FICTIONAL demo frequency record examples/biorefinery/record-utility-loss.csv.

The record is what a disturbance recorder at the FICTIONAL Marsh Hollow Biorefinery might have
kept of an islanding: the utility breaker opens at full rate, the shedding table of
schemes/biorefinery.yaml acts, and the frequency of bus section mv-a is recorded. It is made with
the independent scipy reference model of tests/scipy_reference/reference.py (written from
docs/models.md, not nadir's simulator), for a plant whose "true" parameters differ from the plant
file on purpose, so that `nadir calibrate` has something to find:

    TRUE_PARAMETERS below: the back-pressure turbine's inertia and the exponent of every load the
    plant file gives k = 2.5 (Kundur's industrial motors) are changed.

Then it adds what a real recorder adds: Gaussian measurement noise (NOISE_HZ, 1 sigma), a
quantisation of the frequency channel (QUANTUM_HZ), a fixed sampling rate (RATE_HZ), and a
stretch before the event (PRE_EVENT_S). The noise comes from numpy's PCG64 generator with a fixed
seed, so a rerun writes the same bytes with the same pinned packages.

Usage (needs numpy and scipy, as pinned in tests/scipy_reference/requirements.txt):
    .venv-reference/bin/python scripts/make-demo-record.py [OUT.csv] [--inertia-stg-1 H] [--k-motors K]
The plant, cases and scheme are read from examples/biorefinery/ and schemes/biorefinery.yaml
(flow-style lines only, as the demo writes them).
"""

import argparse
import json
import os
import re
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
sys.path.insert(0, os.path.join(ROOT, "tests", "scipy_reference"))
import reference  # noqa: E402  (the independent model)

# The "truth" of the fictional event, different from examples/biorefinery/plant.yaml on purpose.
TRUE_PARAMETERS = {
    "inertia_s:stg-1": 3.6,   # the plant file says 4.5 s
    "freq_exp:@2.5": 1.6,     # the plant file says 2.5 for the industrial motor loads
}
RATE_HZ = 100.0       # samples per second of the frequency channel
PRE_EVENT_S = 1.0     # recorded before the utility breaker opens
DURATION_S = 20.0     # recorded after it
NOISE_HZ = 0.004      # measurement noise, 1 sigma
QUANTUM_HZ = 0.001    # the channel's resolution
SEED = 20160916
F0 = 50.0


def flow_items(text, key):
    """The `- { ... }` items of the top-level list `key` (one per line) as dicts of raw strings."""
    out, inside = [], False
    for line in text.splitlines():
        if re.match(r"^[a-z_]+:", line):
            inside = line.startswith(key + ":")
            continue
        m = re.match(r"^\s*-\s*\{(.*)\}\s*(#.*)?$", line)
        if inside and m:
            body = m.group(1)
            item = {}
            for k, v in re.findall(r"(\w+):\s*(\[[^\]]*\]|\"[^\"]*\"|[^,]+)", body):
                item[k] = v.strip().strip('"')
            out.append(item)
    return out


def continued(text):
    """Joins a flow item that continues on the next line (the scheme file wraps `sheds:`)."""
    return re.sub(r",\s*\n\s+", ", ", text)


def build_case(true):
    plant_text = open(os.path.join(ROOT, "examples", "biorefinery", "plant.yaml")).read()
    scheme_text = continued(open(os.path.join(ROOT, "schemes", "biorefinery.yaml")).read())
    sections = ["mv-a", "mv-b"]
    loads = []
    for item in flow_items(plant_text, "loads"):
        k = float(item.get("freq_exp", "0"))
        if k == 2.5:
            k = true["freq_exp:@2.5"]
        loads.append({
            "id": item["id"],
            "section": sections.index(item["section"]),
            "p_mw": float(item["p_mw"]),
            "freq_exp": k,
            "inertia_s": float(item.get("inertia_s", "0")),
        })
    assert len(loads) == 36 and abs(sum(l["p_mw"] for l in loads) - 23.1) < 1e-9, "plant file changed"
    ids = [l["id"] for l in loads]
    # The three machines as examples/biorefinery/plant.yaml writes them (block style there), at
    # full rate; their trips as written (under 47.5 Hz / over 52 Hz after 1 s, ROCOF 2.5 Hz/s).
    def trips(over, rocof, over_after=1.0):
        return [{"kind": "under", "level": 47.5, "after_s": 1.0},
                {"kind": "over", "level": over, "after_s": over_after},
                {"kind": "rocof", "level": rocof, "after_s": 0.5}]
    generators = [
        {"id": "stg-1", "section": 0, "rating_mva": 16, "inertia_s": true["inertia_s:stg-1"],
         "p_ref_mw": 11.0, "min_mw": 4.0, "max_mw": 13.6, "droop_pct": 4, "deadband_hz": 0.02,
         "online": True, "model": {"kind": "steam", "governor_s": 0.3, "turbine_s": 0.5},
         "trips": trips(52.0, 2.5)},
        {"id": "stg-2", "section": 1, "rating_mva": 8, "inertia_s": 4.0, "p_ref_mw": 4.5,
         "min_mw": 1.5, "max_mw": 6.8, "droop_pct": 5, "deadband_hz": 0.02, "online": True,
         "model": {"kind": "steam", "governor_s": 0.3, "turbine_s": 0.6},
         "trips": trips(52.0, 2.5)},
        {"id": "bge-1", "section": 1, "rating_mva": 2.5, "inertia_s": 1.0, "p_ref_mw": 1.8,
         "min_mw": 0.6, "max_mw": 2.0, "droop_pct": 4, "deadband_hz": 0.0, "online": True,
         "model": {"kind": "engine", "governor_s": 0.1, "ramp_mw_per_s": 0.25},
         "trips": trips(52.5, 3.0, 0.5)},
    ]
    stages = []
    for item in flow_items(scheme_text, "stages"):
        sheds = [ids.index(s.strip()) for s in item["sheds"].strip("[]").split(",")]
        if "armed_by" in item:
            trigger = {"kind": "breaker", "breaker": item["armed_by"]}
        else:
            trigger = {"kind": "frequency", "pickup_hz": float(item["pickup_hz"]),
                       "min_rocof_hz_per_s": float(item["min_rocof_hz_per_s"])
                       if "min_rocof_hz_per_s" in item else None}
        stages.append({"id": item["id"], "delay_s": float(item["delay_s"]),
                       "breaker_s": float(item["breaker_s"]), "sheds": sheds, "trigger": trigger})
    assert len(stages) == 14, "scheme file changed"
    return {
        "id": "utility-loss", "f0": F0, "duration_s": DURATION_S, "collapse_fraction": 0.85,
        "n_sections": 2, "ties": [{"id": "bus-tie", "between": [0, 1], "closed": True}],
        "utility": {"id": "utility", "section": 0, "closed": True},
        "generators": generators, "loads": loads,
        "measurement": {"frequency_lag_s": 0.04, "rocof_window_s": 0.1},
        "stages": stages,
        "events": [{"at_s": 0.0, "open": "utility"}],
    }


def simulate_dense(case):
    """Runs the reference and keeps every segment's dense output (the reference itself keeps
    only extremes): solve_ivp is wrapped to ask for dense output and remember each solution."""
    segments = []
    real = reference.solve_ivp

    def keeping(*args, **kwargs):
        kwargs["dense_output"] = True
        sol = real(*args, **kwargs)
        segments.append((sol.t[0], sol.t[-1], sol.sol))
        return sol

    reference.solve_ivp = keeping
    try:
        result = reference.Sim(case).run()
    finally:
        reference.solve_ivp = real
    return segments, result


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("out", nargs="?", default=os.path.join(ROOT, "examples", "biorefinery",
                                                           "record-utility-loss.csv"))
    ap.add_argument("--inertia-stg-1", type=float, default=TRUE_PARAMETERS["inertia_s:stg-1"])
    ap.add_argument("--k-motors", type=float, default=TRUE_PARAMETERS["freq_exp:@2.5"])
    ap.add_argument("--noise-hz", type=float, default=NOISE_HZ)
    ap.add_argument("--truth-json", help="also write the true parameters and figures here")
    a = ap.parse_args()
    true = {"inertia_s:stg-1": a.inertia_stg_1, "freq_exp:@2.5": a.k_motors}
    case = build_case(true)
    segments, result = simulate_dense(case)
    n = int(round((PRE_EVENT_S + DURATION_S) * RATE_HZ)) + 1
    t_rec = np.arange(n) / RATE_HZ
    hz = np.full(n, F0)
    for k, t_r in enumerate(t_rec):
        t = t_r - PRE_EVENT_S
        if t <= 0:
            continue
        for (a0, a1, sol) in segments:
            if a0 <= t <= a1 and a1 > a0:
                hz[k] = F0 * (1.0 + sol(t)[0])  # section mv-a's speed deviation, state 0
                break
        else:
            hz[k] = F0 * (1.0 + segments[-1][2](segments[-1][1])[0])
    rng = np.random.Generator(np.random.PCG64(SEED))
    noisy = hz + rng.normal(0.0, a.noise_hz, n)
    quantised = np.round(noisy / QUANTUM_HZ) * QUANTUM_HZ
    with open(a.out, "w", newline="\n") as f:
        f.write("# FICTIONAL frequency record of an islanding at the FICTIONAL Marsh Hollow Biorefinery\n"
                "# demo (bus section mv-a, full rate, utility breaker opens at 1.000 s). Made by\n"
                "# scripts/make-demo-record.py with the scipy reference model, not a real event.\n")
        f.write("time_s,frequency_hz\n")
        for t, v in zip(t_rec, quantised):
            f.write(f"{t:.3f},{v:.3f}\n")
    if a.truth_json:
        with open(a.truth_json, "w") as f:
            json.dump({"true": true, "event_at_s": PRE_EVENT_S, "reference": result}, f)
    print(f"wrote {a.out}: {n} samples, nadir {result['nadir_hz']:.3f} Hz at "
          f"{result['nadir_at_s'] + PRE_EVENT_S:.2f} s record time; stages {sorted(result['stage_open_s'])}")


if __name__ == "__main__":
    main()
