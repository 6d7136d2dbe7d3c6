#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
# Runs test-c3d-check and compares each of its rigid fits with scipy's
# Rotation.align_vectors (Debian's python3-scipy: the least-squares rotation between two sets
# of vectors, here of the centred point sets, i.e. the Kabsch problem), and the translation
# with centroid(b) - R centroid(a).
import os, shutil, subprocess, sys, tempfile
try:
    import numpy as np
    from scipy.spatial.transform import Rotation
except ImportError:
    print("skipped: numpy/scipy missing"); sys.exit(77)

exe = sys.argv[1]
out = tempfile.mkdtemp(prefix="aw-c3dcheck-")
try:
    r = subprocess.run([exe, out])
    if r.returncode != 0:
        print("FAIL: test-c3d-check exit %d" % r.returncode); sys.exit(1)
    lines = open(os.path.join(out, "fits.txt")).read().split("\n")
    i, cases, fails = 0, 0, 0
    while i < len(lines) and lines[i].startswith("case"):
        n = int(lines[i].split()[1]); i += 1
        ab = np.array([[float(x) for x in lines[i + k].split()] for k in range(n)]); i += n
        R = np.array([[float(x) for x in lines[i + k].split()] for k in range(3)]); i += 3
        t = np.array([float(x) for x in lines[i].split()]); i += 1
        a, b = ab[:, :3], ab[:, 3:]
        ca, cb = a.mean(axis=0), b.mean(axis=0)
        ref, _ = Rotation.align_vectors(b - cb, a - ca)   # b - cb ~ R (a - ca)
        Rs = ref.as_matrix()
        ts = cb - Rs @ ca
        dR, dt = np.abs(R - Rs).max(), np.abs(t - ts).max()
        print("case %d: max |R - R_scipy| %.2e, max |t - t_scipy| %.2e" % (cases, dR, dt))
        if dR > 1e-9 or dt > 1e-9:
            print("FAIL: rigid fit differs from scipy"); fails += 1
        cases += 1
    if cases != 5:
        print("FAIL: %d fits read, expected 5" % cases); fails += 1
    sys.exit(1 if fails else 0)
finally:
    shutil.rmtree(out, ignore_errors=True)
