#!/usr/bin/env python3
"""Sweeps the top bias resistor R1 of the vibration front-end from Python and plots the
collector voltage v(c) and the mid-band gain against it, as an SVG drawn by hand (no plotting
package). Run from the repository root (docs/python.md):

    STAGESIM_LIB=build/libstagesim.so.0 PYTHONPATH=python \\
        python3 examples/python_bias_sweep.py out/bias_sweep.svg
"""
import sys

import numpy as np

import stagesim

NETLIST = "netlists/vibration_frontend.cir"
out_path = sys.argv[1] if len(sys.argv) > 1 else "bias_sweep.svg"

r1_values = np.linspace(39e3, 82e3, 44)
ckt = stagesim.Circuit.from_file(NETLIST)
vc = np.empty_like(r1_values)
gain_db = np.empty_like(r1_values)
with ckt.solver() as sv:
    for i, r1 in enumerate(r1_values):
        sv["R1"] = r1
        figures = sv.figures()  # the op quantities and the stage summary
        vc[i] = figures["v(c)"]
        gain_db[i] = figures["gain_mid_db"]

best = int(np.argmin(abs(vc - 6.0)))  # mid-way between the 12 V rail and ground
print(f"{len(r1_values)} points; v(c) from {vc.min():.3f} to {vc.max():.3f} V; "
      f"v(c) nearest 6 V at R1 = {r1_values[best] / 1e3:.1f}k "
      f"({vc[best]:.3f} V, gain {gain_db[best]:.2f} dB)")

# ---- the plot: two traces on one R1 axis, each scaled to its own range ----
W, H, L, R, T, B = 640, 400, 70, 70, 30, 50  # size and margins, px


def xs(x):
    return L + (x - r1_values[0]) / (r1_values[-1] - r1_values[0]) * (W - L - R)


def ys(y, lo, hi):
    return T + (hi - y) / (hi - lo) * (H - T - B)


def polyline(y, lo, hi, colour):
    pts = " ".join(f"{xs(a):.1f},{ys(b, lo, hi):.1f}" for a, b in zip(r1_values, y))
    return f'<polyline fill="none" stroke="{colour}" stroke-width="2" points="{pts}"/>'


vlo, vhi = 0.0, 12.0
glo, ghi = np.floor(gain_db.min()) - 1, np.ceil(gain_db.max()) + 1
parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{W}" height="{H}" '
         f'font-family="sans-serif" font-size="12">',
         f'<rect x="{L}" y="{T}" width="{W - L - R}" height="{H - T - B}" fill="none" '
         f'stroke="#888"/>']
for k in range(5):  # grid and tick labels
    fy = vlo + k * (vhi - vlo) / 4
    y = ys(fy, vlo, vhi)
    gy = glo + k * (ghi - glo) / 4
    parts.append(f'<line x1="{L}" y1="{y:.1f}" x2="{W - R}" y2="{y:.1f}" stroke="#ddd"/>')
    parts.append(f'<text x="{L - 6}" y="{y + 4:.1f}" text-anchor="end" fill="#1f5fa8">'
                 f'{fy:g}</text>')
    parts.append(f'<text x="{W - R + 6}" y="{y + 4:.1f}" fill="#b8461b">{gy:.1f}</text>')
for r1 in np.arange(40e3, 82e3, 10e3):
    parts.append(f'<text x="{xs(r1):.1f}" y="{H - B + 18}" text-anchor="middle">'
                 f'{r1 / 1e3:g}k</text>')
parts += [polyline(vc, vlo, vhi, "#1f5fa8"), polyline(gain_db, glo, ghi, "#b8461b"),
          f'<text x="{W / 2}" y="{H - 10}" text-anchor="middle">R1 (ohm)</text>',
          f'<text x="{L}" y="{T - 10}" fill="#1f5fa8">v(c) (V)</text>',
          f'<text x="{W - R}" y="{T - 10}" text-anchor="end" fill="#b8461b">'
          f'mid-band gain (dB)</text>', "</svg>"]
with open(out_path, "w") as f:
    f.write("\n".join(parts) + "\n")
print(f"wrote {out_path}")
