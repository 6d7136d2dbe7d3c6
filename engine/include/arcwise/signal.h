/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Signal processing for sampled time series: Savitzky-Golay smoothing and differentiation,
 * the zero-lag Butterworth low-pass of biomechanics, and linear interpolation / resampling.
 *
 * Every function works on a strided view of doubles: sample i of a series is x[i * stride], so
 * one axis of a double (*)[3] array is passed as (&v[0][axis], stride 3). Output arrays use
 * their own stride. Inputs and outputs must not overlap unless a function says otherwise.
 *
 * Reference behaviour (checked in tests/sim/test-signal.c):
 *  - aw_savgol_coeffs / aw_savgol_filter match scipy.signal.savgol_coeffs(use='dot') and
 *    scipy.signal.savgol_filter(mode='interp') (Savitzky & Golay 1964; Steinier et al. 1972).
 *  - aw_butter_lowpass matches scipy.signal.butter(N, fc, fs=fs) (bilinear transform with
 *    pre-warping), and aw_filtfilt matches scipy.signal.filtfilt(b, a, x) with its defaults
 *    (odd extension of 3 * max(len(a), len(b)) samples, lfilter_zi initial state).
 *  - The Winter correction (Winter 2009, §3.4) moves the pre-warped cut-off so that the
 *    forward-backward cascade is -3 dB at fc instead of -6 dB. */

#include <stddef.h>

#include "arcwise/status.h"

/* Largest Savitzky-Golay window and Butterworth order accepted (a bound on stack use). */
#define AW_SAVGOL_MAX_WINDOW 255
#define AW_BUTTER_MAX_ORDER 10

/* Savitzky-Golay coefficients by least squares (never from tables).
 * window: odd or even length >= polyorder + 1 (<= AW_SAVGOL_MAX_WINDOW); polyorder >= 0;
 * deriv: 0 = smoothing, d = d-th derivative (d > polyorder gives zeros, as scipy);
 * delta: sample spacing (derivatives are scaled by d! / delta^d);
 * pos: the sample within the window the estimate is for, 0 .. window-1, or -1 for the centre
 * ((window-1)/2, a half-integer for even windows, as scipy's default).
 * out[j], j = 0 .. window-1, multiplies the j-th sample of the window ("dot" order: the
 * estimate is sum_j out[j] * x[j]). scipy's default use='conv' is this array reversed. */
AwStatus aw_savgol_coeffs(int window, int polyorder, int deriv, double delta, int pos,
                          double *out);

/* Savitzky-Golay filter, mode 'interp' of scipy: the interior uses the centred coefficients;
 * the first and last window/2 samples take the value (or derivative) of the polynomial fitted
 * to the first or last `window` samples. Needs an odd window and n >= window. Non-finite input propagates to
 * every output sample whose window contains it (fill gaps first). */
AwStatus aw_savgol_filter(const double *x, size_t n, size_t x_stride, int window, int polyorder,
                          int deriv, double delta, double *y, size_t y_stride);

/* Digital Butterworth low-pass of order N (1 .. AW_BUTTER_MAX_ORDER) with -3 dB cut-off fc_hz
 * at sampling rate fs_hz (0 < fc < fs/2), in transfer-function form: b[0..N], a[0..N] with
 * a[0] = 1, as scipy.signal.butter(N, fc_hz, fs=fs_hz).
 * winter_passes: 0 for the plain design; n >= 1 applies Winter's correction for a cascade of n
 * passes, C = (2^(1/n) - 1)^(1/(2N)), dividing the pre-warped frequency tan(pi fc / fs) by C,
 * so that the n-pass cascade is -3 dB at fc (use 2 with aw_filtfilt). */
AwStatus aw_butter_lowpass(int order, double fc_hz, double fs_hz, int winter_passes, double *b,
                           double *a);

/* One causal pass (direct form II transposed) of the filter b/a (a[0] != 0) of length
 * n_coeffs = order + 1, starting from state zi (n_coeffs - 1 values, NULL = zero). */
AwStatus aw_lfilter(const double *b, const double *a, int n_coeffs, const double *x, size_t n,
                    size_t x_stride, const double *zi, double *y, size_t y_stride);

/* Zero-lag forward-backward filtering exactly as scipy.signal.filtfilt(b, a, x) with default
 * padding (padtype 'odd', padlen 3 * n_coeffs). Needs n > 3 * n_coeffs. y may equal x with the
 * same stride (in place). Non-finite input gives AW_ERR_NON_FINITE (fill gaps first). */
AwStatus aw_filtfilt(const double *b, const double *a, int n_coeffs, const double *x, size_t n,
                     size_t x_stride, double *y, size_t y_stride);

/* Convenience: zero-lag Butterworth low-pass of order 2 passes (order N each way) with Winter's
 * correction on, as used for marker and keypoint data in biomechanics. */
AwStatus aw_lowpass_zero_lag(const double *x, size_t n, size_t x_stride, int order, double fc_hz,
                             double fs_hz, double *y, size_t y_stride);

/* What linear interpolation does outside [t[0], t[n-1]]. */
typedef enum {
  AW_EXTRAP_NAN = 0,    /* NaN outside the samples */
  AW_EXTRAP_HOLD,       /* hold the first / last value (numpy.interp) */
  AW_EXTRAP_LINEAR,     /* extend the first / last segment */
} AwExtrapolation;

/* Linear interpolation of the series (t[i], x[i]) at the query times tq[k] (any order).
 * t must be strictly increasing and finite (AW_ERR_RANGE otherwise), n >= 1 (n >= 2 for
 * AW_EXTRAP_LINEAR). A NaN sample makes NaN wherever it takes part; inside the samples this
 * equals numpy.interp. */
AwStatus aw_interp_linear(const double *t, const double *x, size_t n, size_t x_stride,
                          const double *tq, size_t nq, AwExtrapolation extrap, double *y,
                          size_t y_stride);

/* Fills runs of non-finite samples of x (in place, uniform or not: times t) by linear
 * interpolation between the finite neighbours when the run lasts at most max_gap_s between
 * them (max_gap_s < 0: any length). Leading and trailing runs are left as they are.
 * *n_filled (may be NULL) counts filled samples. Needs at least one finite sample for any fill;
 * returns AW_ERR_EMPTY if x has none. */
AwStatus aw_fill_gaps_linear(const double *t, double *x, size_t n, size_t x_stride,
                             double max_gap_s, size_t *n_filled);

/* Uniform time grid: n = floor((t1 - t0) * rate_hz + 1e-9) + 1 samples t0 + k / rate_hz.
 * Returns the number of samples (0 when t1 < t0 or rate_hz <= 0); out may be NULL to count. */
size_t aw_uniform_grid(double t0, double t1, double rate_hz, double *out);
