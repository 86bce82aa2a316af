"""Writes the inputs benches/limits.sh times, into the folder named on the command line."""
import os
import sys

out = sys.argv[1]
here = os.path.dirname(os.path.abspath(__file__))
demo = open(os.path.join(here, "..", "samples", "two-way-recap.yaml"), encoding="utf-8").read()

BASE = """voicekeep: 1
job: { number: L-1, date: 2026-01-01 }
amplifier: { power: 10 W, into: 8 ohm }
network:
  input: [IN, COM]
  parts:
    C1: { kind: capacitor, between: [IN, H1], value: 6.8 uF, esr: 0.1 ohm }
    L1: { kind: inductor, between: [IN, W1], value: 0.47 mH, dcr: 0.2 ohm }
  drivers:
    HF: { role: tweeter, between: [H1, COM], model: { resistance: 8 ohm } }
    LF: { role: woofer, between: [W1, COM], model: { re: 6 ohm, le: 0.5 mH } }
analysis: { sweep: { from: 20 Hz, to: 20 kHz, per_octave: 6 } }
"""


def write(name, text):
    with open(os.path.join(out, name), "w", encoding="utf-8") as f:
        f.write(text)


def sparse(name, size):
    with open(os.path.join(out, name), "wb") as f:
        f.truncate(size)


write("keys.yaml", BASE + "".join(f"k{i}: 1\n" for i in range(80_000)))
write("blank.yaml", BASE.replace("job: { number: L-1, date: 2026-01-01 }\n", "job:\n  number: L-1\n  date: 2026-01-01\n  notes: \"" + "\\n" * 300_000 + "\"\n"))
sparse("big.csv", 2 << 30)
sparse("big.yaml", 2 << 30)
write("bigtable.yaml", BASE.replace("model: { resistance: 8 ohm }", "model: { table: big.csv }"))
write("montecarlo.yaml", BASE.replace("per_octave: 6 } }", "per_octave: 10000 }, tolerance: { runs: 100000, seed: 1 } }"))


def fitting(cabinets):
    """Twelve tweeters, each behind a capacitor and a series resistor to fit."""
    parts, drivers, comp = [], [], []
    for i in range(12):
        parts.append(f"    C{i}: {{ kind: capacitor, between: [IN, A{i}], value: 4.7 uF, esr: 0.5 ohm }}\n")
        parts.append(f"    R{i}: {{ kind: resistor, between: [A{i}, H{i}], value: 1 ohm }}\n")
        drivers.append(f"    D{i}: {{ role: tweeter, between: [H{i}, COM], model: {{ resistance: 8 ohm }} }}\n")
        comp.append(f"  R{i}: {{ driver: D{i} }}\n")
    text = ("voicekeep: 1\njob: { number: L-2, date: 2026-01-01, speaker: { serials: [" + ", ".join(f"S{c}" for c in range(max(cabinets, 1))) + "] } }\n"
            "amplifier: { power: 10 W, into: 8 ohm }\nnetwork:\n  input: [IN, COM]\n  parts:\n" + "".join(parts) + "  drivers:\n" + "".join(drivers)
            + "analysis: { sweep: { from: 20 Hz, to: 20 kHz, per_octave: 12 } }\nchanges:\n"
            + "".join(f"  - replace: C{i}\n    with: {{ value: 4.7 uF, esr: 0.01 ohm }}\n  - replace: R{i}\n    with: {{ value: auto }}\n" for i in range(12))
            + "compensate:\n" + "".join(comp))
    if cabinets > 1:
        text += "cabinets:\n" + "".join(f"  S{c}:\n    measured:\n      C0: {{ value: {4.5 + 0.05 * c:.2f} uF }}\n" for c in range(cabinets))
    return text


write("fit12.yaml", fitting(1))
write("fit12-pair.yaml", fitting(2))
write("fit12-4.yaml", fitting(4))
write("fit12-16.yaml", fitting(16))
write("demo.yaml", demo)
write("loop.typ", '#import "lib.typ": *\n#show: setup.with(title: "Shop")\n#let x = ()\n#for i in range(1000000000) { x.push(str(i) * 100) }\n#x.len()\n')
write("pages.typ", '#import "lib.typ": *\n#show: setup.with(title: "Shop")\n#for i in range(20000) { pagebreak(); [p] }\n')
write("world.yaml", demo.replace("customer: { name: J. Reil", 'customer: { name: "王小明 山田太郎 김민준 Παπαδόπουλος محمد שלום नमस्ते 🔊"', 1))
full = demo.replace("  work: re-cap with film capacitors", "  work: \"" + ("a line of work done, " * 9000)[:19_990] + "\"", 1)
write("fulltext.yaml", full)
os.makedirs(os.path.join(out, "batch"), exist_ok=True)
for i in range(4):
    write(os.path.join("batch", f"job{i}.yaml"), full)
