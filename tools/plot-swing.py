#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Plot one simulated swing's estimates against the truth.

Usage: tools/plot-swing.py PLOT.csv OUT.png
PLOT.csv comes from `arcwise bench accuracy --plot-data PLOT.csv`. Needs Debian's
python3-matplotlib (run with /usr/bin/python3)."""
import sys

import matplotlib
matplotlib.use("Agg")
import matplotlib.pyplot as plt
import numpy as np


def main():
    if len(sys.argv) != 3:
        print(__doc__.strip(), file=sys.stderr)
        return 2
    src, out = sys.argv[1], sys.argv[2]
    with open(src) as f:
        title = f.readline().lstrip("# ").strip()
        header = f.readline().strip().split(",")
    d = np.genfromtxt(src, delimiter=",", skip_header=2)
    col = {name: i for i, name in enumerate(header)}
    t = d[:, col["t"]]
    occ = d[:, col["occluded"]] > 0
    ests = sorted({h[:-2] for h in header if h.endswith("_x")} - {"raw", "truth"})
    fig, axes = plt.subplots(4, 1, figsize=(10, 11), sharex=True)
    for k, axis in enumerate("xyz"):
        ax = axes[k]
        ax.plot(t, d[:, col["truth_" + axis]], "k-", lw=2, label="truth")
        ax.plot(t, d[:, col["raw_" + axis]], ".", color="0.6", ms=4, label="camera frames")
        for e in ests:
            ax.plot(t, d[:, col[e + "_" + axis]], lw=1.2, label=e)
        ax.set_ylabel(f"{axis} (m, camera)")
        lo, hi = np.nanmin(d[:, col["truth_" + axis]]), np.nanmax(d[:, col["truth_" + axis]])
        pad = 0.5 * (hi - lo) + 0.05
        ax.set_ylim(lo - pad, hi + pad)
    ax = axes[3]
    truth = d[:, [col["truth_x"], col["truth_y"], col["truth_z"]]]
    for e in ests:
        p = d[:, [col[e + "_x"], col[e + "_y"], col[e + "_z"]]]
        ax.plot(t, 1000 * np.linalg.norm(p - truth, axis=1), label=e)
    ax.set_ylabel("error (mm)")
    ax.set_yscale("log")
    ax.set_xlabel("depth clock (s)")
    for a in axes:
        ymin, ymax = a.get_ylim()
        a.fill_between(t, ymin, ymax, where=occ, color="tab:orange", alpha=0.15, step="mid")
        a.set_ylim(ymin, ymax)
    axes[0].legend(loc="upper left", fontsize=8, ncol=2)
    axes[3].legend(loc="upper left", fontsize=8)
    fig.suptitle("Simulated swing, shaded: occlusion windows\n" + title, fontsize=9)
    fig.tight_layout()
    fig.savefig(out, dpi=80)
    return 0


if __name__ == "__main__":
    sys.exit(main())
