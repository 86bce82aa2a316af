#!/usr/bin/env python3
"""Regenerates the ngspice reference data for the engine tests.

For each network below it writes NAME.yaml (a voicekeep job), NAME.cir (the same circuit as a
plain SPICE deck, element by element) and NAME.csv (ngspice's AC solution). `cargo test`
reads the committed .yaml and .csv files and needs no ngspice.

    python3 tests/reference/make.py        (needs ngspice: apt-get install -y ngspice)

Source of the reference values: ngspice (Debian package), `.ac dec` analysis, printed with
`wrdata`. Driver models are expanded with Small's analogous circuit, JAES 20(5) 1972:
Res = Re Qms/Qes, Lces = Re/(2 pi fs Qes), Cmes = Qes/(2 pi fs Re).
"""
import math
import os
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))

# Each network: parts (ref, kind, a, b, value, loss), drivers (ref, a, b, model), probes.
# Units: ohm, farad, henry. Node COM is ground; IN is the amplifier terminal.
NETWORKS = {
    "first-order": dict(
        out=0.0,
        parts=[("C1", "C", "IN", "H1", 6.6315e-6, 0.0), ("L1", "L", "IN", "W1", 0.42441e-3, 0.0)],
        drivers=[("HF", "H1", "COM", ("R", 8.0)), ("LF", "W1", "COM", ("R", 8.0))],
    ),
    "butterworth-esr-dcr": dict(
        out=0.1,
        parts=[
            ("C1", "C", "IN", "H1", 4.6891e-6, 0.9),
            ("L2", "L", "H1", "COM", 0.60021e-3, 0.35),
            ("L1", "L", "IN", "W1", 0.60021e-3, 0.45),
            ("C2", "C", "W1", "COM", 4.6891e-6, 0.02),
        ],
        drivers=[("HF", "H1", "COM", ("RL", 6.0, 0.05e-3)), ("LF", "W1", "COM", ("RL", 6.4, 0.5e-3))],
    ),
    "small-zobel": dict(
        out=0.05,
        parts=[
            ("L1", "L", "IN", "W1", 1.5e-3, 0.5),
            ("C1", "C", "W1", "COM", 12e-6, 0.1),
            ("R1", "R", "W1", "Z1", 6.8, 0.0),
            ("C2", "C", "Z1", "COM", 10e-6, 0.05),
        ],
        drivers=[("LF", "W1", "COM", ("SMALL", 6.4, 0.6e-3, 50.0, 4.0, 0.5))],
    ),
    "lpad-tweeter": dict(
        out=0.0,
        parts=[
            ("C1", "C", "IN", "H1", 3.3e-6, 0.012),
            ("L1", "L", "H1", "COM", 0.27e-3, 0.35),
            ("R1", "R", "H1", "HT", 3.3, 0.0),
            ("R2", "R", "HT", "COM", 6.8, 0.0),
        ],
        drivers=[("HF", "HT", "COM", ("SMALL", 4.6, 0.04e-3, 1100.0, 2.1, 1.4))],
    ),
    "notch-midrange": dict(
        out=0.2,
        parts=[
            ("C1", "C", "IN", "M1", 22e-6, 0.05),
            ("L1", "L", "M1", "COM", 1.8e-3, 0.6),
            ("L2", "L", "M1", "M2", 0.8e-3, 0.3),
            ("C2", "C", "M2", "COM", 8.2e-6, 0.03),
            # Series trap across the midrange: R, L and C in series from M2 to COM.
            ("R3", "R", "M2", "N1", 2.2, 0.0),
            ("L3", "L", "N1", "N2", 0.33e-3, 0.2),
            ("C3", "C", "N2", "COM", 33e-6, 0.04),
        ],
        drivers=[("MF", "M2", "COM", ("SMALL", 5.6, 0.15e-3, 320.0, 3.0, 0.9))],
    ),
    "three-way": dict(
        out=0.05,
        parts=[
            ("L1", "L", "IN", "W1", 2.2e-3, 0.6),
            ("C1", "C", "W1", "COM", 33e-6, 0.1),
            ("R1", "R", "W1", "Z1", 6.2, 0.0),
            ("C5", "C", "Z1", "COM", 12e-6, 0.05),
            ("C2", "C", "IN", "M1", 47e-6, 0.08),
            ("L2", "L", "M1", "COM", 3.3e-3, 0.8),
            ("L3", "L", "M1", "M2", 0.56e-3, 0.25),
            ("C3", "C", "M2", "COM", 10e-6, 0.02),
            ("C4", "C", "IN", "H1", 4.7e-6, 0.015),
            ("L4", "L", "H1", "COM", 0.22e-3, 0.3),
            ("R2", "R", "H1", "HT", 2.7, 0.0),
        ],
        drivers=[
            ("LF", "W1", "COM", ("SMALL", 5.8, 1.2e-3, 32.0, 3.5, 0.38)),
            ("MF", "M2", "COM", ("SMALL", 6.0, 0.2e-3, 280.0, 2.8, 0.8)),
            ("HF", "HT", "COM", ("RL", 4.8, 0.03e-3)),
        ],
    ),
}

KIND = {"C": "capacitor", "L": "inductor", "R": "resistor"}


def fmt(v):
    return "%.10g" % v


def job_yaml(name, n):
    y = ["# ngspice reference network %s; written by make.py, do not edit" % name, "voicekeep: 1", "job: { number: REF-%s, date: 2026-01-01 }" % name,
         "amplifier: { power: 10 W, into: 8 ohm, output_impedance: %s ohm }" % fmt(n["out"]), "network:", "  input: [IN, COM]", "  parts:"]
    for ref, k, a, b, v, loss in n["parts"]:
        unit = {"C": "F", "L": "H", "R": "ohm"}[k]
        extra = {"C": ", esr: %s ohm" % fmt(loss), "L": ", dcr: %s ohm" % fmt(loss), "R": ""}[k]
        y.append("    %s: { kind: %s, between: [%s, %s], value: %s %s%s }" % (ref, KIND[k], a, b, fmt(v), unit, extra))
    y.append("  drivers:")
    for ref, a, b, m in n["drivers"]:
        if m[0] == "R":
            model = "{ resistance: %s ohm }" % fmt(m[1])
        elif m[0] == "RL":
            model = "{ re: %s ohm, le: %s H }" % (fmt(m[1]), fmt(m[2]))
        else:
            model = "{ re: %s ohm, le: %s H, fs: %s Hz, qms: %s, qes: %s }" % tuple(fmt(x) for x in m[1:])
        y.append("    %s: { role: other, between: [%s, %s], model: %s }" % (ref, a, b, model))
    y.append("analysis: { sweep: { from: 20 Hz, to: 20 kHz, per_octave: 6 } }")
    return "\n".join(y) + "\n"


def deck(name, n):
    node = lambda x: "0" if x == "COM" else x
    # A zero output impedance drives IN directly: a 1e-9 ohm resistor there costs ngspice
    # about 4e-4 of relative accuracy in i(V1) on this matrix.
    if n["out"] > 0:
        d = ["* voicekeep reference network %s" % name, "V1 SRC 0 AC 1", "RS SRC IN %s" % fmt(n["out"])]
    else:
        d = ["* voicekeep reference network %s" % name, "V1 IN 0 AC 1"]
    for ref, k, a, b, v, loss in n["parts"]:
        if k == "R":
            d.append("R%s %s %s %s" % (ref, node(a), node(b), fmt(v)))
        elif loss == 0:
            d.append("%s%s %s %s %s" % (k, ref, node(a), node(b), fmt(v)))
        else:
            mid = "%s_x" % ref
            d.append("%s%s %s %s %s" % (k, ref, node(a), mid, fmt(v)))
            d.append("R%s_loss %s %s %s" % (ref, mid, node(b), fmt(loss)))
    probes = []
    for ref, a, b, m in n["drivers"]:
        a2, b2 = node(a), node(b)
        if m[0] == "R":
            d.append("R%s %s %s %s" % (ref, a2, b2, fmt(m[1])))
        else:
            re, le = m[1], m[2]
            d.append("R%s_re %s %s_1 %s" % (ref, a2, ref, fmt(re)))
            if m[0] == "RL":
                d.append("L%s_le %s_1 %s %s" % (ref, ref, b2, fmt(le)))
            else:
                fs, qms, qes = m[3], m[4], m[5]
                res = re * qms / qes
                lces = re / (2 * math.pi * fs * qes)
                cmes = qes / (2 * math.pi * fs * re)
                d.append("L%s_le %s_1 %s_2 %s" % (ref, ref, ref, fmt(le)))
                d.append("R%s_es %s_2 %s %s" % (ref, ref, b2, fmt(res)))
                d.append("L%s_ces %s_2 %s %s" % (ref, ref, b2, fmt(lces)))
                d.append("C%s_mes %s_2 %s %s" % (ref, ref, b2, fmt(cmes)))
        probes.append("v(%s)" % a2 if b2 == "0" else "v(%s,%s)" % (a2, b2))
    d += [".control", "set wr_singlescale", "set wr_vecnames", "set numdgt=12", "ac dec 20 20 20k",
          "let zin = v(IN)/(-i(V1))",
          "wrdata %s.raw.txt %s zin" % (name, " ".join(probes)), "quit", ".endc", ".end"]
    return "\n".join(d) + "\n"


def main():
    for name, n in NETWORKS.items():
        open(os.path.join(HERE, name + ".yaml"), "w").write(job_yaml(name, n))
        open(os.path.join(HERE, name + ".cir"), "w").write(deck(name, n))
        subprocess.run(["ngspice", "-b", name + ".cir"], cwd=HERE, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        raw = os.path.join(HERE, name + ".raw.txt")
        lines = open(raw).read().split("\n")
        header = lines[0].split()
        out = ["# ngspice AC solution of %s.cir (1 V source); columns: freq_hz, then re/im of each driver's voltage in network order, then re/im of Zin" % name]
        out.append("freq_hz," + ",".join("%s_re,%s_im" % (d[0], d[0]) for d in n["drivers"]) + ",zin_re,zin_im")
        for line in lines[1:]:
            cells = line.split()
            if not cells:
                continue
            # wr_singlescale: frequency (re im), then each vector as re im.
            vals = [float(c) for c in cells]
            want = 1 + 2 * (len(n["drivers"]) + 1)
            assert len(vals) == want, (name, len(vals), want, header)
            out.append(",".join(fmt(v) for v in vals))
        open(os.path.join(HERE, name + ".csv"), "w").write("\n".join(out) + "\n")
        os.remove(raw)
        print("wrote", name, file=sys.stderr)


if __name__ == "__main__":
    main()
