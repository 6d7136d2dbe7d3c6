#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# `arcwise fuse` end to end on a simulated recording: header, one row per IMU sample, report.
set -eu
d=$(mktemp -d)
trap 'rm -rf "$d"' EXIT
"$ARCWISE_EXE" simulate --seed 3 --level easy --out "$d" >/dev/null
"$ARCWISE_EXE" fuse --imu "$d/imu.csv" --depth "$d/depth.csv" -o "$d/path.csv" --report "$d/report.txt"
head -1 "$d/path.csv" | grep -q '^t,x,y,z,vx,vy,vz,qw,qx,qy,qz,sx,sy,sz,cam_info_share,flags$'
imu_rows=$(grep -v '^#' "$d/imu.csv" | tail -n +2 | wc -l)
path_rows=$(tail -n +2 "$d/path.csv" | wc -l)
[ "$imu_rows" -eq "$path_rows" ] || { echo "rows: imu $imu_rows, path $path_rows"; exit 1; }
grep -q '^clock_offset_s: ' "$d/report.txt"
grep -q '^q_cam_grav_wxyz: ' "$d/report.txt"
! grep -qi nan "$d/path.csv"
# Bad usage and a missing file give the documented exit codes, and no output file.
set +e
"$ARCWISE_EXE" fuse --imu "$d/imu.csv" 2>/dev/null; [ $? -eq 2 ] || exit 1
"$ARCWISE_EXE" fuse --imu "$d/none.csv" --depth "$d/depth.csv" -o "$d/x.csv" 2>/dev/null; [ $? -eq 1 ] || exit 1
[ ! -e "$d/x.csv" ] || exit 1
exit 0
