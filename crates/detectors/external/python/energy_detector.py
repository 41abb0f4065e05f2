#!/usr/bin/env python3
"""The built-in `energy` detector, again, in numpy, as an external detector.

Same method as crates/detectors/energy (the square-law energy detector of
Urkowitz 1967): optional 2nd-order Butterworth high-pass at low_hz and
low-pass at high_hz (bilinear transform, audio-EQ cookbook coefficients,
started in the steady state of the first sample), frame energy
E = mean of y^2 (or of y_I^2 + y_Q^2) over frame_len samples every hop
samples, and the score E (normalise=none, volts^2) or E / F against the gated
exponential noise floor F (normalise=floor). Everything is computed in
float64 from the float32 samples, as the Rust detector does; only the order
of the additions in a frame's sum differs (numpy sums pairwise), which is
what the cross-check's tolerance allows for.

Arguments are name=value pairs with the built-in detector's parameter names
and defaults, e.g. (in a suite: command: python3, args: <this file> hop=64):

    python3 energy_detector.py frame_len=256 hop=128 normalise=none

Needs numpy and echobench_external.py (next to this file).
"""

import math
import os
import sys

import numpy as np

# Keep the source folder free of __pycache__ when run from a checkout.
sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import echobench_external as ebx  # noqa: E402

# Smallest floor a frame energy is divided by, V^2 (energy's FLOOR_MIN_V2).
FLOOR_MIN_V2 = 1e-24

DEFAULTS = {
    "frame_len": 256,
    "hop": 128,
    "low_hz": 0.0,
    "high_hz": 0.0,
    "normalise": "floor",
    "floor_s": 10.0,
    "floor_gate": 4.0,
}


def parse_arguments(words):
    settings = dict(DEFAULTS)
    for word in words:
        name, sep, text = word.partition("=")
        if not sep or name not in DEFAULTS:
            raise SystemExit(f"energy_detector.py: unknown argument {word!r}; known: {', '.join(DEFAULTS)}")
        kind = type(DEFAULTS[name])
        try:
            settings[name] = kind(text)
        except ValueError:
            raise SystemExit(f"energy_detector.py: {name}={text!r} is not a {kind.__name__}")
    if settings["frame_len"] < 1 or settings["hop"] < 1:
        raise SystemExit("energy_detector.py: frame_len and hop must be at least 1")
    if settings["normalise"] not in ("floor", "none"):
        raise SystemExit("energy_detector.py: normalise must be floor or none")
    if not settings["floor_s"] > 0 or not settings["floor_gate"] >= 1:
        raise SystemExit("energy_detector.py: floor_s must be > 0 and floor_gate >= 1")
    return settings


class Biquad:
    """One 2nd-order Butterworth section, direct form II transposed, float64,
    with the same coefficients and operation order as the Rust detector."""

    def __init__(self, corner_hz, sample_rate_hz, high_pass):
        omega = math.tau * corner_hz / sample_rate_hz
        sin_w, cos_w = math.sin(omega), math.cos(omega)
        alpha = sin_w / math.sqrt(2.0)  # sin w0 / (2Q), Q = 1/sqrt(2)
        a0 = 1.0 + alpha
        half = (1.0 + cos_w) / 2.0 if high_pass else (1.0 - cos_w) / 2.0
        b0, b1 = (half, -2.0 * half) if high_pass else (half, 2.0 * half)
        self.b0, self.b1, self.b2 = b0 / a0, b1 / a0, b0 / a0
        self.a1, self.a2 = -2.0 * cos_w / a0, (1.0 - alpha) / a0
        self.s1 = self.s2 = 0.0
        self.primed = False

    def filter(self, samples):
        b0, b1, b2, a1, a2 = self.b0, self.b1, self.b2, self.a1, self.a2
        s1, s2 = self.s1, self.s2
        out = np.empty(len(samples))
        for n, x in enumerate(samples.tolist()):
            if not self.primed:
                # Steady state of a constant input x (sosfilt_zi idea).
                dc_gain = (b0 + b1 + b2) / (1.0 + a1 + a2)
                y = dc_gain * x
                s1 = y - b0 * x
                s2 = b2 * x - a2 * y
                self.primed = True
            y = b0 * x + s1
            s1 = b1 * x - a1 * y + s2
            s2 = b2 * x - a2 * y
            out[n] = y
        self.s1, self.s2 = s1, s2
        return out


class BandLimit:
    """The optional band limit, the same real filters on I and on Q."""

    def __init__(self, settings, stream):
        fs = stream.sample_rate_hz
        low, high = settings["low_hz"], settings["high_hz"]
        for name, hz in (("low_hz", low), ("high_hz", high)):
            if hz < 0 or hz >= fs / 2:
                raise SystemExit(f"energy_detector.py: {name}={hz} must be in [0, {fs / 2}) Hz")
        if low > 0 and high > 0 and low >= high:
            raise SystemExit("energy_detector.py: low_hz must be below high_hz")

        def chain():
            sections = []
            if low > 0:
                sections.append(Biquad(low, fs, True))
            if high > 0:
                sections.append(Biquad(high, fs, False))
            return sections

        self.channels = [chain() for _ in range(stream.channels)]
        self.active = bool(self.channels[0])

    def __call__(self, samples, stream):
        if not self.active:
            return samples
        parts = [samples.real, samples.imag] if stream.iq else [samples]
        filtered = []
        for part, sections in zip(parts, self.channels):
            y = part.astype(np.float64)
            for section in sections:
                y = section.filter(y)
            filtered.append(y)
        return filtered[0] + 1j * filtered[1] if stream.iq else filtered[0]


class EnergyScorer:
    """Frame energy, raw or against the gated exponential noise floor."""

    def __init__(self, settings):
        self.settings = settings
        self.floor_v2 = 0.0
        self.accepted_frames = 0
        self.step = None

    def __call__(self, frames, stream):
        if np.iscomplexobj(frames):
            z = frames.astype(np.complex128)
            powers = z.real * z.real + z.imag * z.imag
        else:
            y = frames.astype(np.float64)
            powers = y * y
        energies = powers.sum(axis=1) / self.settings["frame_len"]
        if self.settings["normalise"] == "none":
            return energies
        if self.step is None:
            frame_period_s = self.settings["hop"] / stream.sample_rate_hz
            self.step = -math.expm1(-frame_period_s / self.settings["floor_s"])
        return [self.score(e) for e in energies.tolist()]

    def score(self, energy_v2):
        if self.accepted_frames == 0 or self.floor_v2 <= FLOOR_MIN_V2:
            self.floor_v2 = energy_v2
            self.accepted_frames = 1
            return energy_v2 / max(energy_v2, FLOOR_MIN_V2)
        score = energy_v2 / self.floor_v2
        if energy_v2 <= self.settings["floor_gate"] * self.floor_v2:
            self.accepted_frames += 1
            step = max(1.0 / self.accepted_frames, self.step)
            self.floor_v2 += step * (energy_v2 - self.floor_v2)
        return score


def main():
    settings = parse_arguments(sys.argv[1:])
    scorer = EnergyScorer(settings)
    band = []

    def start(stream):
        # Checks the corners against this stream's Nyquist before READY.
        band.append(BandLimit(settings, stream))

    def prefilter(samples, stream):
        return band[0](samples, stream)

    ebx.run(
        scorer,
        settings["frame_len"],
        settings["hop"],
        name="energy (numpy)",
        prefilter=prefilter,
        start=start,
    )


if __name__ == "__main__":
    main()
