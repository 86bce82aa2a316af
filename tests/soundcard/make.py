#!/usr/bin/env python3
"""Regenerates the simulated sound-card impedance recordings for the measurement tests.

A stereo sound card measures a speaker's impedance: an amplifier drives a reference resistor
R_ref in series with the speaker; input channel 1 (left) records the drive voltage Vd across
both, channel 2 (right) the speaker's terminal voltage Vs, and Z = R_ref Vs / (Vd - Vs). The
test signal is an exponential sine sweep (A. Farina, "Simultaneous measurement of impulse
response and distortion with a swept-sine technique", AES 108th Convention, 2000, preprint
5093). This script writes the played sweep, the recordings of a simulated measurement chain,
and each network's exact impedance from ngspice; `cargo test` reads the committed files and
needs neither Python nor ngspice. README.md beside this file lists every file.

    python3 tests/soundcard/make.py     (needs numpy and ngspice: apt-get install -y
                                         python3-numpy ngspice)

THE SWEEP (sweep() and played() below; the Rust `signal` command implements the same). All
arithmetic in IEEE double precision; a file stores the result rounded to its sample format.
Parameters: sample rate fs (Hz), start f1 (Hz), end f2 (Hz), sweep length T (s), level (dBFS,
the sine's peak: 0 dBFS is a peak of 1.0), lead (s), tail (s), repeats R.

    round(x)  = floor(x + 0.5)                      (x >= 0: halves away from zero)
    N         = round(T fs)                         sweep samples, n = 0 .. N-1
    L         = T / ln(f2 / f1)                     seconds per neper of frequency
    t         = n / fs
    phase(n)  = 2 pi f1 L (exp(t / L) - 1)
    A         = 10^(level / 20)
    Nin       = round(fs L ln(2) / 2)               the first half octave
    Nout      = round(fs L ln(2) / 6)               the last sixth of an octave
    w(k, M)   = 0.5 (1 - cos(pi k / M))  for 0 <= k < M,   1 for k >= M
    s[n]      = A sin(phase(n)) * w(n, Nin) * w(N - 1 - n, Nout)

so the fade-in and the fade-out are mirror images: each is a raised cosine in k, the sample's
distance from its own end of the sweep, that is 0 at that end sample (s[0] = s[N-1] = 0) and
reaches (M-1)/M of the way up at k = M-1. The played file is round(lead fs) zeros, then R
times [the N sweep samples, round(tail fs) zeros]; mono.

THE SIMULATED CHAIN (record() below). p is the played file, A its amplitude.
1. Drive with 1 % third-harmonic distortion: d = p + 0.01 A (3u - 4u^3), u = p / A (for a
   full-amplitude sine, + 0.01 A sin(3 theta)). It is computed sample by sample, so above
   fs/6 the third harmonic folds back below fs/2, as it would in a digital distortion.
2. Speaker voltage: Vs = d filtered by H(f) = Z(f) / (R_ref + Z(f)), Z the network's analytic
   impedance (nodal analysis of the same element list as its ngspice deck).
3. Both channels then pass the sound card: analog 2nd-order Butterworth high-pass at 4 Hz,
   s^2 / (s^2 + sqrt(2) w0 s + w0^2), times 1st-order low-pass at 30 kHz, 1 / (1 + s / wc),
   s = j 2 pi f evaluated at the FFT bins, and a latency of round(0.001 fs) samples (48 at
   48 kHz, 44 at 44.1 kHz).
4. Channel 2 only: mismatch of gain +0.5 dB and phase +2 degrees at every frequency (positive
   frequency bins times 10^(0.5/20) e^(+j 2 deg); the DC and Nyquist bins times the gain only).
5. White Gaussian noise, independent on each channel, at -80 dBFS RMS in AES17's sense (0 dBFS
   RMS is the RMS of a full-scale sine, 1/sqrt(2); the sweep's level in dBFS is its peak, the
   same convention): standard deviation 10^(-80/20)/sqrt(2) = 7.0711e-5 of full scale;
   rng = numpy.random.default_rng(seed), then rng.standard_normal(n) for channel 1 and after
   it for channel 2.
Steps 2-4 are one multiplication in the frequency domain: numpy rfft of d zero-padded to the
power of two >= 2 n + fs (n the recording length), irfft, and the first n samples kept, so
nothing wraps. At DC the network is evaluated at 1e-3 Hz (the high-pass zeroes DC anyway);
at the Nyquist bin each channel's product response keeps its real part (a real signal's
Nyquist bin is real). The recording is as long as the played file. The calibration recording
has both inputs on the drive (H = 1; the mismatch on channel 2 as usual).
"""
import copy
import importlib.util
import json
import math
import os
import re
import struct
import subprocess
import sys
import wave

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))
# tests/reference/make.py: its networks and its ngspice deck builder (loaded under its own name,
# as this file is a make.py too).
_spec = importlib.util.spec_from_file_location("reference_make", os.path.join(HERE, "..", "reference", "make.py"))
reference = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(reference)

# The recordings' sweep and chain.
FS = 48000
SWEEP = dict(fs=FS, f1=10.0, f2=22000.0, T=2.0, level=-12.0, lead=0.5, tail=0.5, repeats=1)
SHORT = dict(SWEEP, T=1.0)  # format coverage and refusals: keeps the folder small
R_REF = 22.0
DISTORTION = 0.01
HP_HZ, LP_HZ = 4.0, 30000.0
LATENCY_S = 0.001
MISMATCH_DB, MISMATCH_DEG = 0.5, 2.0
NOISE_RMS = 10.0 ** (-80.0 / 20.0) / math.sqrt(2.0)  # -80 dBFS RMS (AES17: re a full-scale sine)
CLIP_GAIN = 6.0  # clipped.wav: both channels times 6 (+15.6 dB), then saturated at +-1


def rnd(x):
    """Rounds x >= 0 to the nearest integer, halves up (as Rust's f64::round does)."""
    return int(math.floor(x + 0.5))


def sweep(fs, f1, f2, T, level):
    """The exponential sweep of the module docstring: N samples, faded in and out, float64."""
    N = rnd(T * fs)
    L = T / math.log(f2 / f1)
    A = 10.0 ** (level / 20.0)
    n = np.arange(N, dtype=np.float64)
    t = n / fs
    phase = 2.0 * math.pi * f1 * L * (np.exp(t / L) - 1.0)
    s = A * np.sin(phase)
    nin = rnd(fs * L * math.log(2.0) / 2.0)
    nout = rnd(fs * L * math.log(2.0) / 6.0)

    def w(k, m):
        return np.where(k < m, 0.5 * (1.0 - np.cos(math.pi * k / m)), 1.0)

    return s * w(n, nin) * w(N - 1 - n, nout)


def played(fs, f1, f2, T, level, lead, tail, repeats):
    """The played file: round(lead fs) zeros, then repeats times [sweep, round(tail fs) zeros]."""
    one = np.concatenate([sweep(fs, f1, f2, T, level), np.zeros(rnd(tail * fs))])
    return np.concatenate([np.zeros(rnd(lead * fs))] + [one] * repeats)


# ---------------------------------------------------------------------------------------------
# Networks: tests/reference/make.py's format (parts, drivers), solved here by nodal analysis
# and by ngspice with that script's deck builder.


def networks():
    speaker = reference.NETWORKS["butterworth-esr-dcr"]
    check_sample(speaker)
    # As tests/sweeps/make.py drifts it for bw-c1-drifted: C1 3.9 uF (for 4.6891 uF), ESR 2.4
    # ohm (for 0.9 ohm).
    drifted = copy.deepcopy(speaker)
    drifted["parts"] = [(r, k, a, b, 3.9e-6, 2.4) if r == "C1" else (r, k, a, b, v, l) for (r, k, a, b, v, l) in drifted["parts"]]
    resistor10 = dict(out=0.0, parts=[("R1", "R", "IN", "COM", 10.0, 0.0)], drivers=[])
    # Invented driver: Re 6.2 ohm, Le 0.35 mH, fs 48 Hz, Qms 4.1, Qes 0.52 (Small's analogous
    # circuit, the same expansion as tests/reference/make.py's deck).
    driver = dict(out=0.0, parts=[], drivers=[("DRV", "IN", "COM", ("SMALL", 6.2, 0.35e-3, 48.0, 4.1, 0.52))])
    return {"speaker": speaker, "drifted": drifted, "resistor10": resistor10, "driver": driver}


def check_sample(net):
    """samples/sweep-diagnosis.yaml's network is butterworth-esr-dcr's, value for value."""
    text = open(os.path.join(ROOT, "samples", "sweep-diagnosis.yaml")).read()
    scale = {"uF": 1e-6, "mH": 1e-3}
    for ref, kind, a, b, v, loss in net["parts"]:
        m = re.search(r"%s: \{ kind: \w+, between: \[(\w+), (\w+)\], value: ([\d.]+) (uF|mH), (?:esr|dcr): ([\d.]+) ohm" % ref, text)
        assert m, ref
        assert (m.group(1), m.group(2)) == (a, b) and abs(float(m.group(3)) * scale[m.group(4)] - v) < 1e-12 and float(m.group(5)) == loss, ref
    for ref, a, b, model in net["drivers"]:
        m = re.search(r"%s: \{ role: \w+, between: \[(\w+), (\w+)\], model: \{ re: ([\d.]+) ohm, le: ([\d.]+) mH \} \}" % ref, text)
        assert m and (m.group(1), m.group(2)) == (a, b) and float(m.group(3)) == model[1] and abs(float(m.group(4)) * 1e-3 - model[2]) < 1e-15, ref


def small(re_, le, fs, qms, qes):
    """Small's analogous circuit, JAES 20(5) 1972: the motional branch as parallel R, L, C."""
    cmes = qes / (2 * math.pi * fs * re_)
    lces = 1.0 / ((2 * math.pi * fs) ** 2 * cmes)  # = Re / (2 pi fs Qes)
    res = re_ * qms / qes
    return res, lces, cmes


def impedance(net, f):
    """The network's impedance at IN against COM (no amplifier), complex, at frequencies f > 0."""
    s = 2j * math.pi * np.asarray(f, dtype=np.float64)
    branches = []
    for ref, kind, a, b, v, loss in net["parts"]:
        if kind == "R":
            y = np.full(s.shape, 1.0 / v, dtype=complex)
        elif kind == "C":
            y = s * v / (1.0 + s * v * loss)
        else:
            y = 1.0 / (loss + s * v)
        branches.append((a, b, y))
    for ref, a, b, m in net["drivers"]:
        if m[0] == "R":
            z = np.full(s.shape, m[1], dtype=complex)
        elif m[0] == "RL":
            z = m[1] + s * m[2]
        else:
            res, lces, cmes = small(*m[1:])
            z = m[1] + s * m[2] + 1.0 / (1.0 / res + 1.0 / (s * lces) + s * cmes)
        branches.append((a, b, 1.0 / z))
    nodes = ["IN"] + sorted({x for a, b, _ in branches for x in (a, b)} - {"IN", "COM"})
    at = {x: i for i, x in enumerate(nodes)}
    Y = np.zeros((len(s), len(nodes), len(nodes)), dtype=complex)
    for a, b, y in branches:
        for x in (a, b):
            if x != "COM":
                Y[:, at[x], at[x]] += y
        if a != "COM" and b != "COM":
            Y[:, at[a], at[b]] -= y
            Y[:, at[b], at[a]] -= y
    rhs = np.zeros((len(s), len(nodes), 1), dtype=complex)
    rhs[:, 0, 0] = 1.0  # 1 A into IN
    return np.linalg.solve(Y, rhs)[:, 0, 0]


def truth(name, net):
    """Runs NAME.cir (tests/reference/make.py's deck at 48 points an octave from 20 Hz),
    writes NAME.truth.csv and asserts the analytic impedance within 1e-4 of ngspice's."""
    deck = reference.deck(name, net)
    assert "ac dec 20 20 20k" in deck
    deck = deck.replace("ac dec 20 20 20k", "ac oct 48 20 20k").replace("* voicekeep reference network", "* voicekeep sound-card test network")
    open(os.path.join(HERE, name + ".cir"), "w").write(deck)
    subprocess.run(["ngspice", "-b", name + ".cir"], cwd=HERE, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    raw = os.path.join(HERE, name + ".raw.txt")
    rows = [[float(c) for c in line.split()] for line in open(raw).read().split("\n")[1:] if line.split()]
    os.remove(raw)
    f = np.array([r[0] for r in rows])
    zs = np.array([complex(r[-2], r[-1]) for r in rows])
    za = impedance(net, f)
    worst = float(np.max(np.abs(za - zs) / np.abs(zs)))
    assert worst < 1e-4, (name, worst)
    out = ["# impedance of network %s at its terminals IN-COM: ngspice AC analysis of %s.cir" % (name, name),
           "# (written by make.py; V1 AC 1, zin = v(IN)/(-i(V1)), ac oct 48 20 20k); analytic nodal",
           "# solution in make.py agrees within %.1e relative (asserted < 1e-4)" % worst,
           "# frequency_hz,ohm,phase_deg"]
    for fi, z in zip(f, zs):
        out.append("%s,%s,%s" % (reference.fmt(fi), reference.fmt(abs(z)), reference.fmt(math.degrees(np.angle(z)))))
    open(os.path.join(HERE, name + ".truth.csv"), "w").write("\n".join(out) + "\n")
    return len(f), worst


# ---------------------------------------------------------------------------------------------
# The chain


def card(f, fs):
    s = 2j * math.pi * f
    w0 = 2 * math.pi * HP_HZ
    hp = s * s / (s * s + math.sqrt(2.0) * w0 * s + w0 * w0)
    lp = 1.0 / (1.0 + s / (2 * math.pi * LP_HZ))
    return hp * lp * np.exp(-2j * math.pi * f * rnd(LATENCY_S * fs) / fs)


def record(net, sw, rref, seed):
    """(channel 1, channel 2) float64 of the chain in the module docstring; net None: the
    calibration (both inputs on the drive)."""
    fs = sw["fs"]
    p = played(**sw)
    A = 10.0 ** (sw["level"] / 20.0)
    u = p / A
    d = p + DISTORTION * A * (3.0 * u - 4.0 * u ** 3)
    n = len(d)
    nfft = 1 << int(math.ceil(math.log2(2 * n + fs)))
    f = np.fft.rfftfreq(nfft, 1.0 / fs)
    fz = f.copy()
    fz[0] = 1e-3
    h = np.ones(len(f), dtype=complex) if net is None else (lambda z: z / (rref + z))(impedance(net, fz))
    c = card(f, fs)
    m = np.full(len(f), 10.0 ** (MISMATCH_DB / 20.0) * np.exp(1j * math.radians(MISMATCH_DEG)))
    m[0] = m[-1] = 10.0 ** (MISMATCH_DB / 20.0)
    D = np.fft.rfft(d, nfft)
    out = []
    for resp in (c, c * h * m):
        resp = resp.copy()
        resp[0], resp[-1] = resp[0].real, resp[-1].real
        out.append(np.fft.irfft(D * resp, nfft)[:n])
    rng = np.random.default_rng(seed)
    out[0] = out[0] + NOISE_RMS * rng.standard_normal(n)
    out[1] = out[1] + NOISE_RMS * rng.standard_normal(n)
    return out[0], out[1]


# ---------------------------------------------------------------------------------------------
# WAV writers: integer PCM with the wave module (format tag 1), IEEE float by hand (tag 3).


def quantise(x, bits):
    top = 2 ** (bits - 1)
    return np.clip(np.round(np.asarray(x) * top), -top, top - 1).astype(np.int64)


def write_wav(path, channels, fs, fmt):
    """channels: list of float arrays (full scale 1.0); fmt: s16, s24, s32 or f32."""
    x = np.stack(channels, axis=1)  # frames x channels, interleaved row by row
    nch = x.shape[1]
    if fmt == "f32":
        data = x.astype("<f4").tobytes()
        fmt_chunk = struct.pack("<HHIIHHH", 3, nch, fs, fs * nch * 4, nch * 4, 32, 0)
        fact = struct.pack("<I", x.shape[0])
        body = b"WAVE" + b"fmt " + struct.pack("<I", len(fmt_chunk)) + fmt_chunk + b"fact" + struct.pack("<I", 4) + fact + b"data" + struct.pack("<I", len(data)) + data
        open(path, "wb").write(b"RIFF" + struct.pack("<I", len(body)) + body)
        return
    bits = {"s16": 16, "s24": 24, "s32": 32}[fmt]
    q = quantise(x, bits)
    if bits == 24:
        b4 = q.astype("<i4").reshape(-1, 1).view(np.uint8).reshape(-1, 4)
        data = b4[:, :3].tobytes()
    else:
        data = q.astype("<i%d" % (bits // 8)).tobytes()
    with wave.open(path, "wb") as w:
        w.setnchannels(nch)
        w.setsampwidth(bits // 8)
        w.setframerate(fs)
        w.writeframes(data)


# ---------------------------------------------------------------------------------------------


def main():
    nets = networks()
    files = {}
    truths = {}
    for name, net in nets.items():
        truths[name] = truth(name, net)
    res, lces, cmes = small(6.2, 0.35e-3, 48.0, 4.1, 0.52)
    params = dict(re_ohm=6.2, le_h=0.35e-3, fs_hz=48.0, qms=4.1, qes=0.52, res_ohm=res, lces_h=lces, cmes_f=cmes,
                  note="invented values; Cmes = Qes/(2 pi fs Re), Lces = 1/((2 pi fs)^2 Cmes) = Re/(2 pi fs Qes), "
                       "Res = Re Qms/Qes; Le in series with Re, the parallel Res-Lces-Cmes branch after them")
    open(os.path.join(HERE, "driver.params.json"), "w").write(json.dumps(params, indent=2) + "\n")

    def emit(fname, chans, sw, fmt, **info):
        fs = sw["fs"]
        write_wav(os.path.join(HERE, fname), chans, fs, fmt)
        files[fname] = dict(info, sweep=dict(sw), format=fmt, channels=len(chans), frames=len(chans[0]))

    write_wav(os.path.join(HERE, "sweep-48k.f32.wav"), [played(**SWEEP)], FS, "f32")
    files["sweep-48k.f32.wav"] = dict(what="the played file itself (no chain, no noise)", sweep=dict(SWEEP), format="f32", channels=1, frames=len(played(**SWEEP)))

    # Measurements, T 2 s.
    for fname, net, rref, seed in [("speaker.wav", "speaker", R_REF, 1), ("drifted.wav", "drifted", R_REF, 2),
                                   ("resistor10.wav", "resistor10", 10.0, 3), ("driver.wav", "driver", R_REF, 4)]:
        emit(fname, list(record(nets[net], SWEEP, rref, seed)), SWEEP, "s24", network=net, r_ref_ohm=rref, seed=seed,
             what="measurement: channel 1 drive, channel 2 speaker")
    emit("calibration.wav", list(record(None, SWEEP, R_REF, 5)), SWEEP, "s24", network=None, r_ref_ohm=None, seed=5,
         what="calibration: both inputs on the drive (channel 2 carries the mismatch)")
    r2 = dict(SWEEP, repeats=2)
    emit("speaker-r2.wav", list(record(nets["speaker"], r2, R_REF, 6)), r2, "s24", network="speaker", r_ref_ohm=R_REF, seed=6,
         what="measurement with two sweeps, for averaging")

    # Format coverage: one recording (seed 7), four encodings.
    a, b = record(nets["resistor10"], SHORT, 10.0, 7)
    for fname, fmt, chans in [("resistor10-s16.wav", "s16", [a, b]), ("resistor10-s32.wav", "s32", [a, b]),
                              ("resistor10-f32.wav", "f32", [a, b]), ("resistor10-swapped.wav", "s24", [b, a])]:
        emit(fname, chans, SHORT, fmt, network="resistor10", r_ref_ohm=10.0, seed=7,
             what="format coverage; the same recording in each file" + ("; channels swapped (1 speaker, 2 drive)" if "swapped" in fname else ""))

    # Refusals, T 1 s.
    a, b = record(nets["speaker"], SHORT, R_REF, 8)
    a, b = np.clip(CLIP_GAIN * a, -1.0, 1.0), np.clip(CLIP_GAIN * b, -1.0, 1.0)
    first = int(np.argmax(np.abs(a) >= 1.0))
    emit("clipped.wav", [a, b], SHORT, "s24", network="speaker", r_ref_ohm=R_REF, seed=8, gain=CLIP_GAIN,
         first_clipped_sample=first, first_clipped_s=first / FS, clipped_samples_ch1=int(np.sum(np.abs(a) >= 1.0)),
         clipped_samples_ch2=int(np.sum(np.abs(b) >= 1.0)),
         what="refusal: both channels times %g, then saturated at full scale (channel 1 clips)" % CLIP_GAIN)
    a, _ = record(nets["speaker"], SHORT, R_REF, 9)
    emit("mono.wav", [a], SHORT, "s24", network="speaker", r_ref_ohm=R_REF, seed=9, what="refusal: channel 1 (drive) only, mono file")
    a, b = record(nets["speaker"], SHORT, R_REF, 10)
    emit("swapped.wav", [b, a], SHORT, "s24", network="speaker", r_ref_ohm=R_REF, seed=10, what="refusal: channels swapped (1 speaker, 2 drive)")
    n = len(played(**SHORT))
    rng = np.random.default_rng(11)
    a = NOISE_RMS * rng.standard_normal(n)
    b = NOISE_RMS * rng.standard_normal(n)
    emit("nosweep.wav", [a, b], SHORT, "s24", network=None, r_ref_ohm=None, seed=11, what="refusal: noise only, as long as the T 1 s played file")
    s441 = dict(SHORT, fs=44100)
    emit("rate441.wav", list(record(nets["speaker"], s441, R_REF, 12)), s441, "s24", network="speaker", r_ref_ohm=R_REF, seed=12,
         what="refusal: the speaker chain at 44.1 kHz, its sweep generated at 44.1 kHz")
    quiet = dict(SHORT, level=-120.0)
    emit("quiet.wav", list(record(nets["speaker"], quiet, R_REF, 13)), quiet, "s24", network="speaker", r_ref_ohm=R_REF, seed=13,
         what="refusal: sweep at -120 dBFS, under the noise")

    for f in files.values():
        f["bytes"] = None
    for fname in files:
        files[fname]["bytes"] = os.path.getsize(os.path.join(HERE, fname))
    meta = dict(
        written_by="tests/soundcard/make.py (see its docstring for the sweep and the chain)",
        chain=dict(distortion_third_harmonic=DISTORTION, highpass="2nd-order Butterworth, 4 Hz (analog, on the FFT bins)",
                   lowpass="1st-order, 30 kHz (analog, on the FFT bins)", latency_s=LATENCY_S,
                   channel2_mismatch=dict(gain_db=MISMATCH_DB, phase_deg=MISMATCH_DEG), noise_rms_full_scale=NOISE_RMS,
                   noise_seed="numpy.random.default_rng(seed): channel 1 first, then channel 2"),
        truth={k: "%s.truth.csv: %d points, analytic vs ngspice %.1e" % (k, v[0], v[1]) for k, v in truths.items()},
        files=files,
    )
    open(os.path.join(HERE, "sweep.json"), "w").write(json.dumps(meta, indent=2) + "\n")
    total = sum(f["bytes"] for f in files.values())
    for fname, f in files.items():
        print("%-24s %9d bytes" % (fname, f["bytes"]), file=sys.stderr)
    print("total wav %d bytes; clipped.wav first clipped sample %d (%.6f s)" % (total, files["clipped.wav"]["first_clipped_sample"], files["clipped.wav"]["first_clipped_s"]), file=sys.stderr)
    for k, v in truths.items():
        print("truth %s: %d points, analytic vs ngspice worst %.2e" % (k, v[0], v[1]), file=sys.stderr)


if __name__ == "__main__":
    main()
