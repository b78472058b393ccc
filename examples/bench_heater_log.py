#!/usr/bin/env python3
"""Writes the demo bench logs of examples/bench_heater.toml (invented
scenario): examples/bench_heater.csv (seed 1) and
examples/bench_heater_check.csv (seed 2, a fresh log to check a redesign on).

The "true" plant is the model's own (block and sensor, see the model file),
sampled exactly: zero-order hold of (A, B) and Van Loan's integral for the
process noise per sample. The true noise levels differ from the model's
first guess:

    heat-flow noise density  Qc = 1.0e-3 K^2/s  (model guesses 1e-4)
    sensor noise variance    R  = 2.5e-3 K^2    (0.05 K rms; model guesses 1e-4)

The heater power is held for 30 s at a time at 0, 10 or 20 W, drawn at
random. 20 000 samples of 0.1 s (about 33 minutes), written with 9
significant digits. Needs numpy and scipy.

Usage: python3 examples/bench_heater_log.py
"""

import os

import numpy as np
from scipy.linalg import expm

T = 0.1
A = np.array([[-0.025, 0.0], [0.5, -0.5]])
B = np.array([[0.05], [0.0]])
C = np.array([[0.0, 1.0]])
G = np.array([[1.0], [0.0]])
QC_TRUE = 1.0e-3
R_TRUE = 2.5e-3
STEPS = 20_000
HOLD = 300


def sampled():
    """Ad, Bd by the zero-order hold; Qd by Van Loan (1978)."""
    n, m = B.shape
    block = np.zeros((n + m, n + m))
    block[:n, :n] = A
    block[:n, n:] = B
    e = expm(block * T)
    ad, bd = e[:n, :n], e[:n, n:]
    van = np.zeros((2 * n, 2 * n))
    van[:n, :n] = -A
    van[:n, n:] = G @ G.T * QC_TRUE
    van[n:, n:] = A.T
    ev = expm(van * T)
    qd = ev[n:, n:].T @ ev[:n, n:]
    return ad, bd, 0.5 * (qd + qd.T)


def write(path, seed):
    rng = np.random.default_rng(seed)
    ad, bd, qd = sampled()
    w_factor = np.linalg.cholesky(qd + 1e-300 * np.eye(2))
    x = np.zeros(2)
    lines = ["time,power,temperature"]
    power = 0.0
    for k in range(STEPS):
        if k % HOLD == 0:
            power = float(rng.choice([0.0, 10.0, 20.0]))
        y = (C @ x)[0] + np.sqrt(R_TRUE) * rng.standard_normal()
        lines.append(f"{k * T:.1f},{power:.9g},{y:.9g}")
        x = ad @ x + bd[:, 0] * power + w_factor @ rng.standard_normal(2)
    with open(path, "w", encoding="ascii") as f:
        f.write("\n".join(lines) + "\n")


if __name__ == "__main__":
    here = os.path.dirname(os.path.abspath(__file__))
    write(os.path.join(here, "bench_heater.csv"), 1)
    write(os.path.join(here, "bench_heater_check.csv"), 2)
