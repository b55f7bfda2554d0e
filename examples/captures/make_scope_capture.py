#!/usr/bin/env python3
"""Writes scope-switch-node.csv: an invented oscilloscope capture of a 24 V switch node at 150 kHz
(10:1 probe, so the file holds volts / 10), 40 MS/s, 10 switching periods, with ringing and a little
noise. Made by: /usr/bin/python3 examples/captures/make_scope_capture.py (numpy seed 7)."""
import numpy as np

rng = np.random.default_rng(7)
fs, f0, duty, amplitude = 40e6, 150e3, 0.4, 24.0
rise, fall, ring_f, ring_decay, ring_a = 30e-9, 40e-9, 45e6, 60e-9, 0.3
n = int(round(10 / f0 * fs))
t = np.arange(n) / fs
u = np.mod(t, 1 / f0)
width = duty / f0
v = np.interp(u, [0, rise, rise / 2 + width - fall / 2, rise / 2 + width + fall / 2, 1 / f0],
              [0, amplitude, amplitude, 0, 0])
for edge, sign in ((rise, 1.0), (rise / 2 + width + fall / 2, -1.0)):
    since = u - edge
    on = since > 0
    v[on] += sign * ring_a * amplitude * np.exp(-since[on] / ring_decay) * np.sin(2 * np.pi * ring_f * since[on])
v += rng.normal(0, 0.02, n)
with open("scope-switch-node.csv", "w", newline="\n") as f:
    f.write("# invented capture, see make_scope_capture.py\n")
    f.write("Time (us),CH1 (V)\n")
    for ti, vi in zip(t, v / 10.0):
        f.write(f"{ti * 1e6:.6f},{vi:.5f}\n")
