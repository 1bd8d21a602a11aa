#!/usr/bin/env python3
"""Independent reference for nadir's simulator, written from docs/models.md with scipy.

Usage: python3 reference.py cases.json results.json [METHOD RTOL ATOL MAX_STEP_S]

The optional solver settings replace the reference's own (DOP853, 1e-9, 1e-11, 0.02 s); the
cross-check never passes them. examples/bench_vs_scipy.rs passes `RK45 1e-6 1e-9 0.5`, a plain
solve_ivp at nadir's own tolerances, to compare speed and agreement at equal tolerances.

It integrates the equations of docs/models.md (swing equation per island, exponential loads,
governors with non-windup limits, relay measurement lags, shedding stages, generator frequency
protection, bus-tie and utility breakers) with scipy.integrate.solve_ivp (DOP853, rtol 1e-9,
atol 1e-11, max_step 0.02 s). Every discrete change is a terminal event located by solve_ivp's
root finder and the integration restarts after it:
  * relay levels (measured frequency vs pickups and protection levels, measured ROCOF vs
    supervision and protection levels) and the collapse floor;
  * a governor's limited state reaching a limit (then it is held exactly at the limit until the
    command falls back inside: a discrete mode, not a clipped derivative);
  * kinks of the right-hand side (dead-band edges, the engine's ramp limit taking over, an
    algebraic valve reaching a limit), so that no step straddles one.
Timers (case actions, stage delay and breaker time, protection expiry) are integration end points.
Turning points of each island's frequency are located as non-terminal events (dΔω/dt = 0), so the
nadir is the minimum over segment ends and turning points.

Scope (what the cross-check exercises): connected start at nominal utility frequency (no
utility profile), sections and bus ties, steam, steam-reheat (including T_g = 0), gas-turbine,
engine and fixed prime movers with droop and dead band, frequency stages (optional ROCOF
supervision), breaker-armed stages, generator under/over-frequency and ROCOF trips, case actions
open utility / tie / generator and load step, collapse and blackout. Not covered: voltage dips,
undervoltage, utility profiles, isochronous control, hydro, islanded starts.

Input JSON: {"cases": [case, ...]}; a case is
  {"id": str, "f0": Hz, "duration_s": s, "collapse_fraction": 0.85,
   "n_sections": n, "ties": [{"id", "between": [a, b], "closed": bool}],
   "utility": null | {"id": str, "section": s, "closed": bool},
   "generators": [{"id", "section", "rating_mva", "inertia_s", "p_ref_mw", "min_mw",
                   "max_mw", "droop_pct", "deadband_hz", "online": bool,
                   "model": {"kind": "steam", "governor_s", "turbine_s"}
                          | {"kind": "steam_reheat", "governor_s", "reheat_s", "hp_fraction"}
                          | {"kind": "gas_turbine", "governor_s", "turbine_s", "load_limit_mw"}
                          | {"kind": "engine", "governor_s", "ramp_mw_per_s"}
                          | {"kind": "fixed"},
                   "trips": [{"kind": "under"|"over"|"rocof", "level", "after_s"}]}],
   "loads": [{"id", "section", "p_mw", "freq_exp", "inertia_s"}],
   "measurement": {"frequency_lag_s", "rocof_window_s"},
   "stages": [{"id", "delay_s", "breaker_s", "sheds": [load index],
               "trigger": {"kind": "frequency", "pickup_hz", "min_rocof_hz_per_s": null|x}
                        | {"kind": "breaker", "breaker": "utility"|"tie:<i>"|"generator:<i>"}}],
   "events": [{"at_s", "open": "utility"|"tie:<i>"|"generator:<i>"} | {"at_s", "load_step_mw",
               "section"}]}
Output JSON: {"wall_s": total seconds, "results": [{"id", "nadir_hz", "nadir_at_s",
  "section_min_hz": [...], "final_hz", "stage_open_s": {stage id: s}, "generator_trip_s":
  {generator id: s}, "collapse_s": null|s, "blackout_s": null|s, "segments": n}]}
"""

import heapq
import json
import math
import sys
import time

import numpy as np
from scipy.integrate import solve_ivp

METHOD = "DOP853"
RTOL = 1e-9
ATOL = 1e-11
MAX_STEP_S = 0.02
ALGEBRAIC_S = 0.01  # nadir::model::INSTANT_LAG_S: shorter lags are instantaneous (docs/models.md)
MIN_ROCOF_WINDOW_S = 0.01  # nadir::relay::measurement::MIN_ROCOF_WINDOW_S
# After a threshold is crossed its level is moved this far (pu) behind the trajectory, so the
# restart point lies unambiguously on the new side and the same crossing is not found twice.
SIDE_BIAS = 1e-11


def parse_breaker(s):
    if s == "utility":
        return ("utility", 0)
    kind, idx = s.split(":")
    return (kind, int(idx))


class Gen:
    """One machine: governor common path plus its prime mover (docs/models.md §4)."""

    def __init__(self, d, f0, offset):
        self.id = d["id"]
        self.section = d["section"]
        self.energy = d["inertia_s"] * d["rating_mva"]
        self.online = d["online"]
        self.p_ref = d["p_ref_mw"] if self.online else 0.0
        m = d["model"]
        self.kind = m["kind"]
        self.m = m
        governed = self.kind != "fixed"
        self.gain = d["rating_mva"] / (d["droop_pct"] / 100.0) if governed and d["droop_pct"] > 0 else 0.0
        self.db = max(d["deadband_hz"], 0.0) / f0
        self.lo = min(d["min_mw"], self.p_ref)
        self.hi = max(d["max_mw"], self.p_ref)
        if self.kind == "gas_turbine":
            self.hi = min(self.hi, max(m["load_limit_mw"], self.p_ref))
        self.offset = offset
        self.n = {"steam": 2, "gas_turbine": 2, "steam_reheat": 2, "engine": 1, "fixed": 0}[self.kind]
        # Limiter mode of the limited state: 0 free, +1 held at hi, -1 held at lo.
        self.mode = 0
        self.trips = d["trips"]

    def error(self, dw):
        if dw > self.db:
            return dw - self.db
        if dw < -self.db:
            return dw + self.db
        return 0.0

    def command(self, dw):
        return self.p_ref - self.gain * self.error(dw)

    def clamp(self, v):
        return min(max(v, self.lo), self.hi)

    def algebraic_valve(self):
        return self.kind in ("steam", "gas_turbine", "steam_reheat") and self.m["governor_s"] < ALGEBRAIC_S

    def init(self, y):
        c = self.clamp(self.command(0.0))
        for i in range(self.n):
            y[self.offset + i] = c

    def valve(self, c, x0):
        if self.algebraic_valve():
            return self.clamp(c)
        if self.mode > 0:
            return self.hi
        if self.mode < 0:
            return self.lo
        return x0

    def rhs(self, dw, y, dy):
        """Writes the state derivatives, returns mechanical power (MW)."""
        o = self.offset
        c = self.command(dw)
        k = self.kind
        if k == "fixed":
            return self.p_ref
        if k == "engine":
            if self.mode != 0:
                dy[o] = 0.0
                return self.hi if self.mode > 0 else self.lo
            d = (c - y[o]) / max(self.m["governor_s"], ALGEBRAIC_S)
            if self.m["ramp_mw_per_s"] > 0:
                d = min(d, self.m["ramp_mw_per_s"])
            dy[o] = d
            return y[o]
        # Lagged valve state (index 0) and turbine / reheat state (index 1).
        if self.algebraic_valve() or self.mode != 0:
            dy[o] = 0.0
        else:
            dy[o] = (c - y[o]) / self.m["governor_s"]
        v = self.valve(c, y[o])
        if k in ("steam", "gas_turbine"):
            t_t = self.m["turbine_s"]
            if t_t < ALGEBRAIC_S:
                dy[o + 1] = 0.0
                return v
            dy[o + 1] = (v - y[o + 1]) / t_t
            return y[o + 1]
        t_r = self.m["reheat_s"]
        if t_r < ALGEBRAIC_S:
            dy[o + 1] = 0.0
            return v
        dy[o + 1] = (v - y[o + 1]) / t_r
        fh = self.m["hp_fraction"]
        return fh * v + (1.0 - fh) * y[o + 1]


class Sim:
    def __init__(self, c):
        self.c = c
        self.f0 = c["f0"]
        self.ns = c["n_sections"]
        self.t_end = c["duration_s"]
        self.floor = c.get("collapse_fraction", 0.85) - 1.0
        off = 3 * self.ns
        self.gens = []
        for g in c["generators"]:
            gen = Gen(g, self.f0, off)
            off += gen.n
            self.gens.append(gen)
        self.n = off
        self.loads = c["loads"]
        self.load_on = [ld["p_mw"] > 0 for ld in self.loads]
        self.step_mw = [0.0] * self.ns
        self.tie_closed = [t["closed"] for t in c["ties"]]
        u = c.get("utility")
        self.util_section = u["section"] if u else None
        self.util_closed = bool(u and u["closed"])
        meas = c["measurement"]
        self.t_f = max(meas["frequency_lag_s"], 0.0)
        self.t_w = max(meas["rocof_window_s"], MIN_ROCOF_WINDOW_S)
        self.frozen = [False] * self.ns
        self.t = 0.0
        self.y = np.zeros(self.n)
        for g in self.gens:
            g.init(self.y)
        self.bias = {}
        self.timers = []
        self.seq = 0
        for i, ev in enumerate(c["events"]):
            self.push(max(ev["at_s"], 0.0), ("case", i))
        self.stages = []
        for s in c["stages"]:
            sec = self.loads[s["sheds"][0]]["section"] if s["sheds"] else None
            self.stages.append({"d": s, "section": sec, "state": "idle", "expires": None})
        # Generator elements: per generator a list of [trip, state, expires].
        self.elems = [[{"trip": tr, "state": "idle", "expires": None} for tr in g.trips] for g in self.gens]
        self.stage_open = {}
        self.gen_trip = {}
        self.collapse_s = None
        self.blackout_s = None
        self.sec_min = [self.f0] * self.ns
        self.sec_min_t = [0.0] * self.ns
        self.segments = 0
        self.topology()
        for isl in self.islands:
            if not isl["util"] and self.imbalance(isl) > 1e-9:
                raise ValueError("a separated island at t = 0 is outside this reference's scope")
        self.check_blackout()

    # --- discrete structure -------------------------------------------------------------------
    def push(self, t, what):
        heapq.heappush(self.timers, (t, self.seq, what))
        self.seq += 1

    def topology(self):
        parent = list(range(self.ns))

        def find(a):
            while parent[a] != a:
                parent[a] = parent[parent[a]]
                a = parent[a]
            return a

        for t, closed in zip(self.c["ties"], self.tie_closed):
            if closed:
                a, b = find(t["between"][0]), find(t["between"][1])
                if a != b:
                    parent[max(a, b)] = min(a, b)
        groups = {}
        for s in range(self.ns):
            groups.setdefault(find(s), []).append(s)
        self.islands = []
        self.island_of = [0] * self.ns
        for secs in sorted(groups.values()):
            util = self.util_closed and self.util_section in secs
            for s in secs:
                self.island_of[s] = len(self.islands)
            self.islands.append({"secs": secs, "util": util})

    def imbalance(self, isl):
        load = sum(ld["p_mw"] for l, ld in enumerate(self.loads) if self.load_on[l] and ld["section"] in isl["secs"])
        gen = sum(g.p_ref for g in self.gens if g.online and g.section in isl["secs"])
        return abs(load - gen)

    def free(self, isl):
        return not isl["util"] and not self.frozen[isl["secs"][0]]

    def check_blackout(self):
        for isl in self.islands:
            if not self.free(isl):
                continue
            if not any(g.online and g.section in isl["secs"] for g in self.gens):
                self.freeze(isl)
                if self.blackout_s is None:
                    self.blackout_s = self.t

    def freeze(self, isl):
        for s in isl["secs"]:
            self.frozen[s] = True

    def open_breaker(self, br):
        kind, i = br
        if kind == "utility":
            if not self.util_closed:
                return
            self.util_closed = False
            self.topology()
            self.check_blackout()
        elif kind == "tie":
            if not self.tie_closed[i]:
                return
            self.tie_closed[i] = False
            self.topology()
            self.check_blackout()
        else:
            g = self.gens[i]
            if not g.online:
                return
            g.online = False
            self.gen_trip.setdefault(g.id, self.t)
            self.check_blackout()
        for k, st in enumerate(self.stages):
            trig = st["d"]["trigger"]
            if trig["kind"] == "breaker" and st["state"] == "idle" and parse_breaker(trig["breaker"]) == br:
                st["state"] = "picked"
                st["expires"] = self.t + st["d"]["delay_s"]
                self.push(st["expires"], ("stage_delay", k, st["expires"]))

    def handle(self, what):
        kind = what[0]
        if kind == "case":
            ev = self.c["events"][what[1]]
            if "open" in ev:
                self.open_breaker(parse_breaker(ev["open"]))
            else:
                self.step_mw[ev["section"]] += ev["load_step_mw"]
        elif kind == "stage_delay":
            st = self.stages[what[1]]
            if st["state"] == "picked" and st["expires"] == what[2]:
                st["state"] = "commanded"
                opens = self.t + st["d"]["breaker_s"]
                self.push(opens, ("stage_breaker", what[1]))
        elif kind == "stage_breaker":
            st = self.stages[what[1]]
            st["state"] = "done"
            for l in st["d"]["sheds"]:
                self.load_on[l] = False
            self.stage_open[st["d"]["id"]] = self.t
        elif kind == "gen_elem":
            gi, j, exp = what[1], what[2], what[3]
            el = self.elems[gi][j]
            if self.gens[gi].online and el["state"] == "timing" and el["expires"] == exp:
                el["state"] = "operated"
                self.open_breaker(("generator", gi))

    # --- signals and relays -------------------------------------------------------------------
    def side(self, key, y):
        """Sign of (quantity − level) at y, with the level moved behind a recent crossing."""
        q, s, level = key
        idx = 3 * s + (1 if q == "m" else 2 if q == "r" else 0)
        v = y[idx] - level + self.bias.get(key, 0.0)
        return 1 if v > 0 else -1

    def f_key(self, s, hz):
        return ("m", s, hz / self.f0 - 1.0)

    def r_key(self, s, hz_per_s):
        return ("r", s, hz_per_s / self.f0)

    def stage_keys(self, st):
        trig = st["d"]["trigger"]
        keys = [self.f_key(st["section"], trig["pickup_hz"])]
        if trig.get("min_rocof_hz_per_s") is not None:
            keys.append(self.r_key(st["section"], -trig["min_rocof_hz_per_s"]))
        return keys

    def stage_condition(self, st, y):
        keys = self.stage_keys(st)
        cond = self.side(keys[0], y) < 0
        if len(keys) > 1:
            # −rocof ≥ min  ⇔  rocof ≤ −min.
            cond = cond and self.side(keys[1], y) < 0
        return cond

    def elem_keys(self, g, el):
        tr = el["trip"]
        if tr["kind"] in ("under", "over"):
            return [self.f_key(g.section, tr["level"])]
        return [self.r_key(g.section, tr["level"]), self.r_key(g.section, -tr["level"])]

    def elem_condition(self, g, el, y):
        tr = el["trip"]
        keys = self.elem_keys(g, el)
        if tr["kind"] == "under":
            return self.side(keys[0], y) < 0
        if tr["kind"] == "over":
            return self.side(keys[0], y) > 0
        return self.side(keys[0], y) > 0 or self.side(keys[1], y) < 0

    def evaluate(self):
        y = self.y
        for k, st in enumerate(self.stages):
            if st["d"]["trigger"]["kind"] != "frequency" or st["section"] is None or self.frozen[st["section"]]:
                continue
            cond = self.stage_condition(st, y)
            if st["state"] == "idle" and cond:
                st["state"] = "picked"
                st["expires"] = self.t + st["d"]["delay_s"]
                self.push(st["expires"], ("stage_delay", k, st["expires"]))
            elif st["state"] == "picked" and not cond:
                st["state"] = "idle"
        for gi, g in enumerate(self.gens):
            if not g.online or self.frozen[g.section]:
                continue
            for j, el in enumerate(self.elems[gi]):
                cond = self.elem_condition(g, el, y)
                if el["state"] == "idle" and cond:
                    el["state"] = "timing"
                    el["expires"] = self.t + max(el["trip"]["after_s"], 0.0)
                    self.push(el["expires"], ("gen_elem", gi, j, el["expires"]))
                elif el["state"] == "timing" and not cond:
                    el["state"] = "idle"
        for isl in self.islands:
            if self.free(isl) and self.side(("w", isl["secs"][0], self.floor), y) < 0:
                self.freeze(isl)
                if self.collapse_s is None:
                    self.collapse_s = self.t

    def guard_keys(self):
        keys = []
        for st in self.stages:
            if st["d"]["trigger"]["kind"] == "frequency" and st["section"] is not None \
                    and st["state"] in ("idle", "picked") and not self.frozen[st["section"]]:
                keys += self.stage_keys(st)
        for gi, g in enumerate(self.gens):
            if g.online and not self.frozen[g.section]:
                for el in self.elems[gi]:
                    if el["state"] != "operated":
                        keys += self.elem_keys(g, el)
        for isl in self.islands:
            if self.free(isl):
                keys.append(("w", isl["secs"][0], self.floor))
                for g in self.gens:
                    if g.online and g.section in isl["secs"] and g.db > 0 and g.gain > 0:
                        keys += [("w", isl["secs"][0], g.db), ("w", isl["secs"][0], -g.db)]
        return list(dict.fromkeys(keys))

    # --- continuous part ----------------------------------------------------------------------
    def rhs(self, t, y):
        # Plain floats: indexing a numpy array element by element is several times slower.
        y = y.tolist()
        dy = [0.0] * self.n
        n_isl = len(self.islands)
        pm = [0.0] * n_isl
        pe = [0.0] * n_isl
        en = [0.0] * n_isl
        for g in self.gens:
            i = self.island_of[g.section]
            if not g.online or self.frozen[g.section]:
                continue
            pm[i] += g.rhs(y[3 * g.section], y, dy)
            en[i] += g.energy
        for l, ld in enumerate(self.loads):
            if not self.load_on[l]:
                continue
            s = ld["section"]
            i = self.island_of[s]
            ratio = max(1.0 + y[3 * s], 0.0)
            pe[i] += ld["p_mw"] * ratio ** ld["freq_exp"]
            en[i] += ld["inertia_s"] * ld["p_mw"]
        for s in range(self.ns):
            pe[self.island_of[s]] += self.step_mw[s]
        for s in range(self.ns):
            if self.frozen[s]:
                continue
            i = self.island_of[s]
            isl = self.islands[i]
            if isl["util"]:
                dw = 0.0
            elif en[i] > 0:
                dw = (pm[i] - pe[i]) / (2.0 * en[i])
            else:
                dw = 0.0
            dy[3 * s] = dw
            dm = dw if self.t_f < ALGEBRAIC_S else (y[3 * s] - y[3 * s + 1]) / self.t_f
            dy[3 * s + 1] = dm
            dy[3 * s + 2] = (dm - y[3 * s + 2]) / self.t_w
        return np.array(dy)

    def limiter_events(self):
        """(key, value function, direction, action) for every governor limit and kink."""
        out = []
        for gi, g in enumerate(self.gens):
            if not g.online or self.frozen[g.section] or g.kind == "fixed":
                continue
            o, s = g.offset, g.section
            if g.algebraic_valve():
                for lim in (g.hi, g.lo):
                    out.append((("kink", gi, lim), lambda y, g=g, s=s, lim=lim: g.command(y[3 * s]) - lim,
                                0, ("kink",)))
                continue
            if g.mode == 0:
                out.append((("limit", gi, 1), lambda y, o=o, hi=g.hi: y[o] - hi, 1, ("limit", g, 1)))
                out.append((("limit", gi, -1), lambda y, o=o, lo=g.lo: y[o] - lo, -1, ("limit", g, -1)))
            else:
                lim = g.hi if g.mode > 0 else g.lo
                out.append((("release", gi, g.mode), lambda y, g=g, s=s, lim=lim: g.command(y[3 * s]) - lim,
                            -g.mode, ("release", g)))
            if g.kind == "engine" and g.m["ramp_mw_per_s"] > 0 and g.mode == 0:
                tg = max(g.m["governor_s"], ALGEBRAIC_S)
                r = g.m["ramp_mw_per_s"]
                out.append((("ramp", gi), lambda y, g=g, s=s, o=o, tg=tg, r=r: (g.command(y[3 * s]) - y[o]) / tg - r,
                            0, ("kink",)))
        return out

    def record(self, t, y):
        for s in range(self.ns):
            f = self.f0 * (1.0 + y[3 * s])
            if f < self.sec_min[s]:
                self.sec_min[s] = f
                self.sec_min_t[s] = t

    def integrate(self, t_next):
        specs = []
        for key in self.guard_keys():
            q, s, level = key
            idx = 3 * s + (1 if q == "m" else 2 if q == "r" else 0)
            specs.append((key, lambda y, idx=idx, level=level: y[idx] - level, 0, ("guard",)))
        specs += self.limiter_events()
        events, old_side = [], []
        for key, raw, direction, _ in specs:
            g0 = raw(self.y) + self.bias.get(key, 0.0)
            if g0 == 0.0:
                # Sitting exactly on a level: count it on the side the event waits to leave.
                self.bias[key] = -direction * SIDE_BIAS if direction else SIDE_BIAS
                g0 = self.bias[key]
            old_side.append(1 if g0 > 0 else -1)
            b = self.bias.get(key, 0.0)
            fn = (lambda t, y, raw=raw, b=b: raw(y) + b)
            fn.terminal = True
            fn.direction = direction
            events.append(fn)
        n_term = len(events)
        turning = []
        for isl in self.islands:
            if self.free(isl):
                s = isl["secs"][0]
                fn = (lambda t, y, s=s: self.rhs(t, y)[3 * s])
                fn.terminal = False
                events.append(fn)
                turning.append(s)
        sol = solve_ivp(self.rhs, (self.t, t_next), self.y, method=METHOD, rtol=RTOL, atol=ATOL,
                        max_step=MAX_STEP_S, events=events or None)
        self.segments += 1
        if sol.status < 0:
            raise RuntimeError(f"solver failed at t = {self.t}: {sol.message}")
        for k, s in enumerate(turning):
            for te, ye in zip(sol.t_events[n_term + k], sol.y_events[n_term + k]):
                self.record(te, ye)
        t_stop, y_stop = sol.t[-1], sol.y[:, -1].copy()
        self.record(t_stop, y_stop)
        self.t, self.y = t_stop, y_stop
        if sol.status != 1:
            self.t = t_next
            return
        fired = [k for k in range(n_term) if len(sol.t_events[k]) and sol.t_events[k][-1] == t_stop]
        for k in fired:
            key, _, _, act = specs[k]
            # The restart point is put on the new side, just past the level.
            self.bias[key] = -old_side[k] * SIDE_BIAS
            if act[0] == "limit":
                g, d = act[1], act[2]
                g.mode = d
                self.y[g.offset] = g.hi if d > 0 else g.lo
            elif act[0] == "release":
                g = act[1]
                self.y[g.offset] = g.hi if g.mode > 0 else g.lo
                g.mode = 0
            if act[0] in ("limit", "release"):
                gi = self.gens.index(act[1])
                for kk in [kk for kk in self.bias if kk[0] in ("limit", "release") and kk[1] == gi]:
                    del self.bias[kk]

    def run(self):
        self.evaluate()
        while True:
            while self.timers and self.timers[0][0] <= self.t:
                _, _, what = heapq.heappop(self.timers)
                self.handle(what)
            self.evaluate()
            if self.timers and self.timers[0][0] <= self.t:
                continue
            if self.t >= self.t_end:
                break
            t_next = min(self.timers[0][0], self.t_end) if self.timers else self.t_end
            self.integrate(t_next)
            if self.segments > 5000:
                raise RuntimeError("event storm")
        alive = [isl for isl in self.islands if not self.frozen[isl["secs"][0]]]
        final = min((self.f0 * (1.0 + self.y[3 * isl["secs"][0]]) for isl in alive), default=None)
        s_min = min(range(self.ns), key=lambda s: (self.sec_min[s], self.sec_min_t[s]))
        return {
            "id": self.c["id"],
            "nadir_hz": self.sec_min[s_min],
            "nadir_at_s": self.sec_min_t[s_min],
            "section_min_hz": self.sec_min,
            "final_hz": final,
            "stage_open_s": self.stage_open,
            "generator_trip_s": self.gen_trip,
            "collapse_s": self.collapse_s,
            "blackout_s": self.blackout_s,
            "segments": self.segments,
        }


def main():
    global METHOD, RTOL, ATOL, MAX_STEP_S
    if len(sys.argv) not in (3, 7):
        sys.exit("usage: reference.py cases.json results.json [METHOD RTOL ATOL MAX_STEP_S]")
    if len(sys.argv) == 7:
        METHOD = sys.argv[3]
        RTOL, ATOL, MAX_STEP_S = (float(a) for a in sys.argv[4:7])
    with open(sys.argv[1]) as f:
        cases = json.load(f)["cases"]
    start = time.perf_counter()
    results = []
    for c in cases:
        t0 = time.perf_counter()
        r = Sim(c).run()
        r["wall_s"] = time.perf_counter() - t0
        results.append(r)
    wall = time.perf_counter() - start
    with open(sys.argv[2], "w") as f:
        json.dump({"wall_s": wall, "results": results}, f)


if __name__ == "__main__":
    main()
