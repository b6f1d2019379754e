#!/usr/bin/python3
"""Reference responses for the identification tests, computed by SciPy.

Usage: /usr/bin/python3 simulate.py REQUEST.json RESPONSE.json

For each case of the request the plant

    G(s) = eff / (s (tau s + 1)) * e^(-s delay)      [* ws / (s + ws), ws = 2 pi lowpass_hz]

is driven by a command held constant from each log timestamp to the next
(zero-order hold) and delayed by `delay`, and the rate is returned at the
log timestamps. Everything runs on a fine time grid of step fine_dt: log
timestamps are the fine-grid indices `idx`, and the delay must be a whole
number of fine steps, so scipy.signal.lsim with interp=False (exact
zero-order-hold integration) simulates the continuous system exactly. The
plant starts at rest and the command before the first sample is the first
command. `step` asks for the delayed unit-step response at the times
k * step_dt, k = 0..step_n-1 (step_dt a whole number of fine steps).

The response carries the SciPy and NumPy versions. Written for the
locusmith ident tests; the tests generate the commands and add the noise.
"""

import json
import sys

import numpy as np
import scipy
from scipy import signal


def plant(case):
    num = [case["eff"]]
    den = [case["tau"], 1.0, 0.0]
    if case.get("lowpass_hz", 0) > 0:
        ws = 2.0 * np.pi * case["lowpass_hz"]
        num = [case["eff"] * ws]
        den = np.polymul(den, [1.0, ws])
    return signal.lti(num, den)


def whole_steps(value, dt, what):
    q = value / dt
    n = int(round(q))
    if abs(q - n) > 1e-6:
        raise SystemExit("%s %r is not a whole number of fine steps %r" % (what, value, dt))
    return n


def run_response(sys_, run, fine_dt, dfine):
    idx = np.asarray(run["idx"], dtype=np.int64)
    u = np.asarray(run["u"], dtype=float)
    if idx[0] != 0 or np.any(np.diff(idx) <= 0):
        raise SystemExit("idx must start at 0 and increase")
    n = int(idx[-1]) + 1
    held = np.empty(n)
    for j in range(len(idx)):
        end = idx[j + 1] if j + 1 < len(idx) else n
        held[idx[j]:end] = u[j]
    delayed = np.concatenate([np.full(dfine, held[0]), held])[:n]
    t = np.arange(n) * fine_dt
    _, y, _ = signal.lsim(sys_, delayed, t, interp=False)
    return np.atleast_1d(y)[idx]


def main():
    with open(sys.argv[1]) as f:
        req = json.load(f)
    out = {"scipy": scipy.__version__, "numpy": np.__version__, "cases": []}
    for case in req["cases"]:
        sys_ = plant(case)
        fine_dt = case["fine_dt"]
        dfine = whole_steps(case["delay"], fine_dt, "delay")
        res = {"name": case["name"], "runs": []}
        for run in case["runs"]:
            res["runs"].append({"y": run_response(sys_, run, fine_dt, dfine).tolist()})
        if case.get("step_n", 0) > 0:
            per = whole_steps(case["step_dt"], fine_dt, "step_dt")
            n = (case["step_n"] - 1) * per + 1
            u = np.ones(n)
            u[:dfine] = 0.0
            t = np.arange(n) * fine_dt
            _, y, _ = signal.lsim(sys_, u, t, interp=False)
            res["step"] = np.atleast_1d(y)[::per].tolist()
        out["cases"].append(res)
    with open(sys.argv[2], "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
