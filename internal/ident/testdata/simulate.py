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

lsim steps its recursion in a Python loop, about 3 us a step: a 40 s log
on a 0.1 ms grid takes over a second. lsim_held gives lsim's result in a
few hundredths of that: see there.
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


def lsim_held(sys_, u, t, m=200, check=2000):
    """What signal.lsim(sys_, u, t, interp=False) returns, for long inputs.

    lsim's recursion x[k+1] = Ad x[k] + Bd u[k] is linear, so the state m
    steps after the state x is Ad^m x (lsim's free response from x) plus
    the response from rest to the m inputs between, which is the
    convolution of those inputs with lsim's response to one unit input
    held for one step. lsim runs over one block of m steps (free from each
    unit state, and for the unit input); the blocks are chained by that
    superposition, the convolutions of all blocks being one matrix product.
    The result is held to lsim itself over the first `check` points, to
    1e-12 of their peak (the two sum the same terms in another order;
    over 4e5 steps of an integrating plant they part by about 1e-11 of the
    peak, rounding).
    """
    ss = sys_.to_ss()
    A, B, C, D = (np.asarray(a, dtype=float) for a in (ss.A, ss.B, ss.C, ss.D))
    n, N = A.shape[0], len(u)
    if N <= check:
        return np.atleast_1d(signal.lsim(ss, u, t, interp=False)[1])
    tb = t[:m + 1]
    pulse = np.zeros(m + 1)
    pulse[0] = 1.0
    H = signal.lsim(ss, pulse, tb, interp=False)[2].reshape(m + 1, n)
    P = np.empty((m + 1, n, n))  # P[j] = Ad^j
    for i in range(n):
        P[:, :, i] = signal.lsim(ss, np.zeros(m + 1), tb, X0=np.eye(n)[i])[2].reshape(m + 1, n)
    # T[i, j] = H[j - i]: the state at step j of a block from its input i.
    T = np.zeros((m, m + 1, n))
    for i in range(m):
        T[i, i:] = H[:m + 1 - i]
    Q = -(-(N - 1) // m)
    U = np.zeros(Q * m)
    U[:N] = u
    F = (U.reshape(Q, m) @ T.reshape(m, (m + 1) * n)).reshape(Q, m + 1, n)
    XQ = np.zeros((Q + 1, n))  # the state at each block's start
    for q in range(Q):
        XQ[q + 1] = P[m] @ XQ[q] + F[q, m]
    x = (np.einsum("jab,qb->qja", P[:m], XQ[:Q]) + F[:, :m]).reshape(Q * m, n)
    x = np.vstack([x, XQ[Q:]])[:N]
    y = x @ C[0] + u * D[0, 0]
    y0 = signal.lsim(ss, u[:check], t[:check], interp=False)[1]
    err = np.max(np.abs(y[:check] - y0))
    if not err <= 1e-12 * np.max(np.abs(y0)):
        raise SystemExit("lsim_held differs from lsim by %g" % err)
    return y


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
    return lsim_held(sys_, delayed, t)[idx]


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
            res["step"] = lsim_held(sys_, u, t)[::per].tolist()
        out["cases"].append(res)
    with open(sys.argv[2], "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
