#!/usr/bin/env python3
"""Regenerates the synthetic terminal sweeps for the confirmation tests.

ngspice solves the reference network butterworth-esr-dcr (tests/reference/make.py, the same
deck) as designed and with C1 20 % low; the input impedance at the terminals is written as
frequency Hz, |Z| ohm, phase deg, with seeded noise of 1 % in |Z| and 1 degree in phase
(Gaussian, standard deviations), as a bench sweep would carry. For the diagnosis, C1 drifted
(value and ESR), with noise and without. `cargo test` reads the
committed CSV files and needs no ngspice.

    python3 tests/sweeps/make.py        (needs ngspice: apt-get install -y ngspice)
"""
import cmath
import copy
import math
import os
import random
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "reference"))
import make  # noqa: E402


def sweep(name, net, seed, noise=True):
    deck = make.deck(name, net).replace("ac dec 20 20 20k", "ac dec 40 20 20k")
    open(os.path.join(HERE, name + ".cir"), "w").write(deck)
    subprocess.run(["ngspice", "-b", name + ".cir"], cwd=HERE, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    raw = os.path.join(HERE, name + ".raw.txt")
    rng = random.Random(seed)
    if noise:
        what = "|Z| with 1 %% and phase with 1 degree of seeded noise (seed %d)" % seed
    else:
        what = "without noise (the tests add their own, seeded)"
    out = ["# synthetic terminal sweep %s: ngspice AC of %s.cir, %s" % (name, name, what),
           "# frequency Hz, |Z| ohm, phase deg"]
    for line in open(raw).read().split("\n")[1:]:
        cells = line.split()
        if not cells:
            continue
        vals = [float(c) for c in cells]
        z = complex(vals[-2], vals[-1])
        k = 1 if noise else 0
        mag = abs(z) * (1 + k * 0.01 * rng.gauss(0, 1))
        ph = math.degrees(cmath.phase(z)) + k * rng.gauss(0, 1)
        out.append("%s,%s,%s" % (make.fmt(vals[0]), make.fmt(mag), make.fmt(ph)))
    open(os.path.join(HERE, name + ".csv"), "w").write("\n".join(out) + "\n")
    os.remove(raw)
    os.remove(os.path.join(HERE, name + ".cir"))


def main():
    net = make.NETWORKS["butterworth-esr-dcr"]
    sweep("bw-as-built", net, 1)
    low = copy.deepcopy(net)
    low["parts"] = [(r, k, a, b, v * 0.8 if r == "C1" else v, l) for (r, k, a, b, v, l) in low["parts"]]
    sweep("bw-c1-low", low, 2)
    # A drifted electrolytic: C1 17 % low (3.9 uF for 4.6891 uF) with its ESR up from 0.9 to
    # 2.4 ohm; with noise (seed 3) and without (for the coverage test's own seeded noise).
    drift = copy.deepcopy(net)
    drift["parts"] = [(r, k, a, b, 3.9e-6, 2.4) if r == "C1" else (r, k, a, b, v, l) for (r, k, a, b, v, l) in drift["parts"]]
    sweep("bw-c1-drifted", drift, 3)
    sweep("bw-c1-drifted-clean", drift, 0, noise=False)
    print("wrote bw-as-built.csv, bw-c1-low.csv, bw-c1-drifted.csv, bw-c1-drifted-clean.csv", file=sys.stderr)


if __name__ == "__main__":
    main()
