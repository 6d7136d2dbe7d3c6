/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Eigen-decomposition of small symmetric matrices (up to 4 x 4) by cyclic Jacobi rotations
 * (Golub & Van Loan, Matrix Computations, 4th ed., §8.5). Jacobi is chosen over closed forms
 * because it stays accurate for nearly repeated eigenvalues (a nearly straight stretch of a
 * hand path, a nearly degenerate Wahba problem). Used by the swing-plane fit (analysis) and
 * the quaternion of Horn's absolute orientation (fusion calibration). */

#include <stdbool.h>

#define AW_SYM_EIGEN_MAX 4

/* A: n x n symmetric, row-major (only read). On return w[0..n) holds the eigenvalues in
 * ascending order and V (n x n, row-major) the unit eigenvectors in its columns: A V = V W.
 * Returns false (and leaves w, V untouched) for n outside 1..AW_SYM_EIGEN_MAX or a non-finite
 * entry. */
bool aw_sym_eigen(int n, const double *A, double *w, double *V);
