#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
# Recomputes the yuv420p planes written by test-export-yuv with numpy (Debian's python3-numpy
# as the reference library) from the ITU-R BT.709-6 formulas in floating point:
#   E'Y = 0.2126 R + 0.7152 G + 0.0722 B, E'Cb = (B - E'Y)/1.8556, E'Cr = (R - E'Y)/1.5748,
#   Y = 16 + 219 E'Y, Cb = 128 + 224 E'Cb, Cr = 128 + 224 E'Cr (R, G, B in 0..1),
# chroma from the mean of each 2x2 block, and requires every sample within one level of it.
import os, shutil, subprocess, sys, tempfile
try:
    import numpy as np
except ImportError:
    print("skipped: numpy missing"); sys.exit(77)

exe = sys.argv[1]
out = tempfile.mkdtemp(prefix="aw-yuv-")
try:
    r = subprocess.run([exe, out], capture_output=True, text=True)
    sys.stderr.write(r.stderr)
    if r.returncode != 0:
        print("FAIL: test-export-yuv exit %d" % r.returncode); sys.exit(1)
    w, h = map(int, r.stdout.split())
    raw = np.fromfile(os.path.join(out, "yuv.bin"), dtype=np.uint8)
    n_img, n_y, n_c = w * h * 4, w * h, (w // 2) * (h // 2)
    if raw.size != n_img + n_y + 2 * n_c:
        print("FAIL: file size %d" % raw.size); sys.exit(1)
    img = raw[:n_img].reshape(h, w, 4)[:, :, :3].astype(np.float64) / 255.0
    y = raw[n_img:n_img + n_y].reshape(h, w).astype(np.int32)
    u = raw[n_img + n_y:n_img + n_y + n_c].reshape(h // 2, w // 2).astype(np.int32)
    v = raw[n_img + n_y + n_c:].reshape(h // 2, w // 2).astype(np.int32)
    R, G, B = img[:, :, 0], img[:, :, 1], img[:, :, 2]
    ey = 0.2126 * R + 0.7152 * G + 0.0722 * B
    y_ref = 16 + 219 * ey
    blk = img.reshape(h // 2, 2, w // 2, 2, 3).mean(axis=(1, 3))
    by = 0.2126 * blk[..., 0] + 0.7152 * blk[..., 1] + 0.0722 * blk[..., 2]
    u_ref = 128 + 224 * (blk[..., 2] - by) / 1.8556
    v_ref = 128 + 224 * (blk[..., 0] - by) / 1.5748
    fails = 0
    for name, got, ref in (("Y", y, y_ref), ("Cb", u, u_ref), ("Cr", v, v_ref)):
        err = np.abs(got - ref)
        exact = np.mean(got == np.rint(ref))
        print("%s: max |ours - exact| %.3f levels, %.1f%% equal to the exact value rounded"
              % (name, err.max(), 100 * exact))
        # Within one level everywhere: rounding the exact value gives at most 0.5, and the
        # 16-bit fixed point of the coefficients adds well under one more.
        if err.max() > 1.0 or exact < 0.98:
            print("FAIL: %s differs from BT.709" % name); fails += 1
    sys.exit(1 if fails else 0)
finally:
    shutil.rmtree(out, ignore_errors=True)
