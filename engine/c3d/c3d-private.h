/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once
/* Shared between the C3D reader and writer. */
#include "arcwise/c3d.h"

/* Decodes the 4-byte float at p in the processor's format (Intel/MIPS IEEE, DEC VAX F). */
double aw_c3d_decode_float(const uint8_t *p, AwC3dProcessor proc);
