#!/usr/bin/env python3
"""Checks the recordings that make.py wrote: reads every WAV file with its own reader (and the
integer ones with Python's wave module too), and recovers the impedance from the recordings
with a quick method independent of make.py's chain, against the ngspice truth.

    python3 tests/soundcard/check.py    (needs numpy; run after make.py)

Recovery: each channel is deconvolved by regularised spectral division by the played file's
spectrum (numpy FFT, zero-padded to >= twice the length, so the harmonics' responses come out
at negative times, wrapped to the end); the impulse responses are cut around channel 1's peak, with
half-Hann fades of FADE at both ends, by WINDOWS: long below 1 kHz (the driver's resonance and
the mismatch's non-causal phase need it), short above (less noise); each is transformed
(a direct DTFT at the truth frequencies); H = Vs / Vd, divided by the calibration's ratio
where used; Z = R_ref H / (1 - H). For repeated sweeps the played file's first sweep
deconvolves, and the windowed responses a sweep period apart are averaged. The played file is read from sweep-48k.f32.wav where it is
that sweep; otherwise it is made by make.played (the one definition of the sweep).
"""
import math
import os
import struct
import sys
import wave

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import make  # noqa: E402

# (from Hz, to Hz, seconds before the peak, seconds after it); fades of FADE s.
WINDOWS = [(0.0, 1000.0, 0.100, 0.400), (1000.0, 1e9, 0.020, 0.050)]
FADE = 0.010


def read_wav(path):
    """(sample rate, format tag, bits, frames x channels float64 in full scale)."""
    b = open(path, "rb").read()
    assert b[:4] == b"RIFF" and b[8:12] == b"WAVE" and struct.unpack("<I", b[4:8])[0] == len(b) - 8, path
    i, fmt, data = 12, None, None
    while i + 8 <= len(b):
        cid, size = b[i:i + 4], struct.unpack("<I", b[i + 4:i + 8])[0]
        body = b[i + 8:i + 8 + size]
        if cid == b"fmt ":
            fmt = struct.unpack("<HHIIHH", body[:16])
        elif cid == b"data":
            data = body
        i += 8 + size + (size & 1)
    tag, nch, fs, byte_rate, align, bits = fmt
    assert align == nch * bits // 8 and byte_rate == fs * align, path
    if tag == 3:
        x = np.frombuffer(data, "<f4").astype(np.float64)
    elif bits == 24:
        u = np.frombuffer(data, np.uint8).reshape(-1, 3).astype(np.int32)
        v = u[:, 0] | (u[:, 1] << 8) | (u[:, 2] << 16)
        x = np.where(v >= 1 << 23, v - (1 << 24), v) / float(1 << 23)
    else:
        x = np.frombuffer(data, "<i%d" % (bits // 8)).astype(np.float64) / float(1 << (bits - 1))
    x = x.reshape(-1, nch)
    if tag == 1:  # the standard library's reader agrees
        with wave.open(path, "rb") as w:
            assert (w.getnchannels(), w.getframerate(), w.getsampwidth() * 8, w.getnframes()) == (nch, fs, bits, x.shape[0]), path
            assert w.readframes(w.getnframes()) == data, path
    return fs, tag, bits, x


def read_truth(name):
    rows = [l.split(",") for l in open(os.path.join(HERE, name + ".truth.csv")) if not l.startswith("#")]
    f = np.array([float(r[0]) for r in rows])
    z = np.array([float(r[1]) * np.exp(1j * math.radians(float(r[2]))) for r in rows])
    return f, z


def responses(x, p, fs, f, repeats=1, period=0):
    """Channel 1's and channel 2's windowed responses at frequencies f (WINDOWS by band); p
    holds one sweep, and with repeats the responses at peak + r period are averaged."""
    n = max(len(x), len(p))
    nfft = 1 << int(math.ceil(math.log2(2 * n)))
    P = np.fft.rfft(p, nfft)
    G = np.conj(P) / (np.abs(P) ** 2 + 1e-6 * np.max(np.abs(P)) ** 2)
    hs = [np.fft.irfft(np.fft.rfft(x[:, c], nfft) * G, nfft) for c in (0, 1)]
    peak = int(np.argmax(np.abs(hs[0])))
    out = [np.zeros(len(f), dtype=complex), np.zeros(len(f), dtype=complex)]
    for lo, hi, pre, post in WINDOWS:
        sel = (f >= lo) & (f < hi)
        k = np.arange(-int(pre * fs), int(post * fs))
        w = np.ones(len(k))
        nf = int(FADE * fs)
        ramp = 0.5 * (1 - np.cos(math.pi * np.arange(nf) / nf))
        w[:nf] = ramp
        w[-nf:] = ramp[::-1]
        t = peak + k  # sample times; negative ones wrap
        e = np.exp(-2j * math.pi * np.outer(f[sel], t) / fs)
        for o, h in zip(out, hs):
            seg = np.mean([h[(t + r * period) % nfft] for r in range(repeats)], axis=0)
            o[sel] = e @ (w * seg)
    return out, peak


def recover(rec, p, rref, f, cal=None, repeats=1, period=0):
    fs, _, _, x = rec
    (vd, vs), peak = responses(x, p, fs, f, repeats, period)
    h = vs / vd
    if cal is not None:
        (cd, cs), _ = responses(cal[3], p, cal[0], f)
        h = h / (cs / cd)
    return rref * h / (1 - h), peak


def errors(z, zt, fmin=20.0, fmax=20000.0):
    mag = np.max(np.abs(np.abs(z) / np.abs(zt) - 1)) * 100
    ph = np.max(np.abs(np.degrees(np.angle(z / zt))))
    return mag, ph


def main():
    wavs = {}
    for fname in sorted(os.listdir(HERE)):
        if fname.endswith(".wav"):
            wavs[fname] = read_wav(os.path.join(HERE, fname))
    sweep = wavs["sweep-48k.f32.wav"][3][:, 0]
    p = make.played(**make.SWEEP)
    print("sweep-48k.f32.wav vs make.played: max diff %.2e (f32 rounding)" % np.max(np.abs(sweep - p)))
    p = sweep
    worst = {}
    cal = wavs["calibration.wav"]

    def report(label, name, z, zt):
        m, ph = errors(z, zt)
        worst[label] = (m, ph)
        print("%-44s |Z| worst %6.3f %%   phase worst %6.3f deg" % (label, m, ph))

    for fname, net, rref in [("speaker.wav", "speaker", 22.0), ("drifted.wav", "drifted", 22.0),
                             ("resistor10.wav", "resistor10", 10.0), ("driver.wav", "driver", 22.0)]:
        f, zt = read_truth(net)
        z, peak = recover(wavs[fname], p, rref, f)
        report(fname + " without calibration", net, z, zt)
        z, _ = recover(wavs[fname], p, rref, f, cal)
        report(fname + " with calibration.wav", net, z, zt)
    f, zt = read_truth("speaker")
    period = make.rnd(make.SWEEP["T"] * make.FS) + make.rnd(make.SWEEP["tail"] * make.FS)
    z, _ = recover(wavs["speaker-r2.wav"], p, 22.0, f, cal, 2, period)
    report("speaker-r2.wav, 2 averaged, with calibration", "speaker", z, zt)
    z, _ = recover(wavs["speaker-r2.wav"], p, 22.0, f, cal, 1, period)
    report("speaker-r2.wav, first only, with calibration", "speaker", z, zt)
    # The T 1 s files: the mismatch removed from the known 0.5 dB and 2 degrees (no calibration
    # recording is made at T 1 s).
    mism = 10 ** (0.5 / 20) * np.exp(1j * math.radians(2.0))

    def recover_known(rec, sw, rref, f, swap=False):
        fs, _, _, x = rec
        if swap:
            x = x[:, ::-1]
        (vd, vs), _ = responses(x, make.played(**sw), fs, f)
        h = vs / vd / mism
        return rref * h / (1 - h)

    f10, zt10 = read_truth("resistor10")
    base = wavs["resistor10-s32.wav"][3]
    for fname in ["resistor10-s16.wav", "resistor10-s32.wav", "resistor10-f32.wav", "resistor10-swapped.wav"]:
        swap = "swapped" in fname
        x = wavs[fname][3][:, ::-1] if swap else wavs[fname][3]
        tol = 2 ** -24 if wavs[fname][1] == 3 else {16: 2 ** -16, 24: 2 ** -24, 32: 2 ** -32}[wavs[fname][2]]
        d = np.max(np.abs(x - base))
        assert d <= tol + 2 ** -32, (fname, d)  # within half the coarser format's step
        report(fname + " (known mismatch removed)", "resistor10", recover_known(wavs[fname], make.SHORT, 10.0, f10, swap), zt10)
    report("swapped.wav, swapped back (known mism.)", "speaker", recover_known(wavs["swapped.wav"], make.SHORT, 22.0, f, True), zt)
    report("rate441.wav at 44.1 kHz (known mismatch)", "speaker", recover_known(wavs["rate441.wav"], dict(make.SHORT, fs=44100), 22.0, f), zt)
    # What the refusals look like.
    fs, _, _, x = wavs["clipped.wav"]
    full = np.abs(x) >= 1 - 2 ** -23
    print("clipped.wav: first saturated sample %d (%.6f s); saturated samples ch1 %d, ch2 %d"
          % (int(np.argmax(full[:, 0])), np.argmax(full[:, 0]) / fs, full[:, 0].sum(), full[:, 1].sum()))
    print("mono.wav: %d channel(s); rate441.wav: %d Hz" % (wavs["mono.wav"][3].shape[1], wavs["rate441.wav"][0]))
    for fname in ["nosweep.wav", "quiet.wav"]:
        x = wavs[fname][3]
        rms = [20 * np.log10(np.std(x[:, c]) * math.sqrt(2)) for c in (0, 1)]
        print("%s: RMS ch1 %.2f, ch2 %.2f dBFS (AES17), peak %.2f dB re full scale" % (fname, rms[0], rms[1], 20 * np.log10(np.max(np.abs(x)))))
    m, ph = errors(recover_known(wavs["quiet.wav"], dict(make.SHORT, level=-120.0), 22.0, f), zt)
    print("quiet.wav recovered anyway: |Z| worst %.0f %%, phase worst %.0f deg (noise)" % (m, ph))
    fs, _, _, x = wavs["speaker.wav"]
    print("speaker.wav: peak ch1 %.2f dBFS, ch2 %.2f dBFS" % tuple(20 * np.log10(np.max(np.abs(x[:, c]))) for c in (0, 1)))
    bad = [k for k, (m, ph) in worst.items() if ("without" not in k) and (m > 1.0 or ph > 1.0)]
    print("all within 1 %% and 1 degree where calibrated: %s" % ("yes" if not bad else "NO: " + ", ".join(bad)))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
