/* kilter: the few types every part of the library shares: complex numbers,
 * phase masks, file positions and the unit systems of feeder files. */
#ifndef KILTER_TYPES_H
#define KILTER_TYPES_H

#include <complex.h>

typedef double complex kl_complex;

/* Phase masks: a bus or section holds any subset of a, b, c. */
enum { KL_PH_A = 1, KL_PH_B = 2, KL_PH_C = 4, KL_PH_ABC = 7 };

typedef struct { int line, col; } kl_loc; /* 1-based position in the file */

typedef struct kl_arena kl_arena; /* string arena (internal, src/base/arena.c) */

typedef enum { KL_UNITS_US = 0, KL_UNITS_SI = 1 } kl_unit_system;

#endif
