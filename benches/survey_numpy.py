#!/usr/bin/env python3
"""The numpy baseline of docs/performance.md's survey target: for every pair of the benched fleet
(target/bench-survey/, written by `cargo bench --bench survey`), read both sweeps, window them (Kaiser
beta 9), transform them to time (inverse FFT, zero-padded to 4x), and take the largest difference of the
two magnitude traces, in one process. It does a small part of what `survey` does (no line model, no
alignment, no explanation); it is the floor a script would start from.

    python3 benches/survey_numpy.py target/bench-survey [REPEATS]
"""
import pathlib
import sys
import time

import numpy as np


def read_s1p(path):
    # Touchstone 1.0 RI, the format the bench writes: '!' comments, one '#' option line.
    rows = []
    for line in open(path):
        s = line.split("!", 1)[0].strip()
        if not s or s.startswith("#"):
            continue
        rows.append(s.split())
    a = np.array(rows, dtype=float)
    return a[:, 1] + 1j * a[:, 2]


def trace(s11, window):
    # numpy's ifft divides by its length; undo that and normalise by the window sum, so a lone
    # reflection rho reads |rho| (docs/method.md).
    n = 4 * len(s11)
    return np.abs(np.fft.ifft(s11 * window, n)) * n / window.sum()


def main():
    folder = pathlib.Path(sys.argv[1])
    repeats = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    pairs = sorted(folder.glob("pair*-warm.s1p"))
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        worst = 0.0
        for warm in pairs:
            cold = warm.with_name(warm.name.replace("-warm", "-cold"))
            b, c = read_s1p(warm), read_s1p(cold)
            w = np.kaiser(len(b), 9.0)
            worst = max(worst, float(np.max(np.abs(trace(c, w) - trace(b, w)))))
        best = min(best, time.perf_counter() - t0)
    print(f"{len(pairs)} pairs: best of {repeats}: {best:.3f} s "
          f"({1000 * best / len(pairs):.2f} ms per pair; numpy {np.__version__}, "
          f"python {sys.version.split()[0]}); largest difference {worst:.3g}")


if __name__ == "__main__":
    main()
