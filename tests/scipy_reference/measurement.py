"""Reference for the relay measurement's exact step solution (src/relay/measurement.rs).

Reads JSON lines from stdin, one problem each: {"lag_s", "window_s", "b": [5 coefficients],
"h", "theta", "m0", "r0"}. Integrates T_f*dm/dt = w - m, T_w*dr/dt = dm/dt - r with
w(t) = sum b[k]*(t/h)**k (docs/models.md section 5) from t = 0 to theta*h by
scipy.integrate.solve_ivp (DOP853, rtol 1e-12, atol 1e-15) and prints one JSON line
{"m": .., "r": ..} per problem. T_f = 0 means m = w (no frequency lag).
"""
import json
import sys

import numpy as np
from scipy.integrate import solve_ivp


def solve(p):
    t_f, t_w, b, h = p["lag_s"], p["window_s"], p["b"], p["h"]
    w = np.polynomial.Polynomial(b)
    dw = w.deriv()

    def rhs(t, y):
        m, r = y
        th = t / h
        dm = dw(th) / h if t_f == 0.0 else (w(th) - m) / t_f
        return [dm, (dm - r) / t_w]

    t_end = p["theta"] * h
    sol = solve_ivp(rhs, (0.0, t_end), [p["m0"], p["r0"]], method="DOP853",
                    rtol=1e-12, atol=1e-15)
    assert sol.success, sol.message
    return {"m": float(sol.y[0, -1]), "r": float(sol.y[1, -1])}


for line in sys.stdin:
    if line.strip():
        print(json.dumps(solve(json.loads(line))))
