/* kilter: units of the feeder file and of printed results.
 *
 * The loader turns "600 ft", "0.1859 ohm/mi", "48 + j15.8 kVA" into SI with
 * these routines; the program converts SI back to the file's own system
 * (`kl_unit_system`) only when it prints.  Exact conversion factors are those
 * of NIST SP 811 (2008), appendix B. */
#ifndef KILTER_UNITS_H
#define KILTER_UNITS_H

#include <stddef.h>
#include "kilter/error.h"
#include "kilter/types.h"

/* pi and sqrt(3) to the precision of a double; math.h's M_PI is not part of
 * strict C11, so every file takes these. */
#define KL_PI 3.14159265358979323846
#define KL_SQRT3 1.73205080756887729353
#define KL_DEG_PER_RAD (180.0 / KL_PI)

/* Exact by definition (international foot and mile, 1959; NIST SP 811 B.8). */
#define KL_M_PER_FT 0.3048
#define KL_M_PER_IN 0.0254
#define KL_M_PER_MI 1609.344
#define KL_M_PER_MIL 2.54e-5
/* 1 kcmil = 1000 circular mils = 1000 * (pi/4) * (2.54e-5 m)^2 */
#define KL_M2_PER_KCMIL 5.06707479e-7

typedef enum {
    KL_Q_LENGTH = 0,      /* m */
    KL_Q_AREA,            /* m2 */
    KL_Q_OHM_PER_LENGTH,  /* ohm/m */
    KL_Q_S_PER_LENGTH,    /* S/m */
    KL_Q_IMPEDANCE,       /* ohm */
    KL_Q_VOLTAGE,         /* V */
    KL_Q_POWER,           /* W, var or VA */
    KL_Q_CURRENT,         /* A */
    KL_Q_FREQUENCY,       /* Hz */
    KL_Q_RESISTIVITY,     /* ohm m */
    KL_Q_TEMPERATURE,     /* degC (kept in Celsius) */
    KL_Q_SHARE,           /* fraction: "%" (divided by 100), "pu" or a plain number */
    KL_Q_ANGLE,           /* degrees */
    KL_Q_PER_UNIT,        /* "pu" or a plain number */
    KL_Q_NUMBER,          /* a plain number, no unit */
    KL_Q_COUNT
} kl_quantity;

/* Parses "number unit" (or "re + jim unit" when allow_complex) into SI.
 * On failure returns KL_EINPUT and writes what was expected into why[n]. */
kl_status kl_units_parse(const char *text, kl_quantity q, int allow_complex,
                         kl_complex *value, char *why, size_t n);
/* The same for a real quantity. */
kl_status kl_units_parse_real(const char *text, kl_quantity q, double *value,
                              char *why, size_t n);
/* "m, km, mm, ..." : the units accepted for q, for messages. */
const char *kl_units_expected(kl_quantity q);
const char *kl_units_quantity_name(kl_quantity q);

/* Printing in the file's own system: long lengths in mi or km, short ones in
 * ft or m. */
double kl_units_long_length(kl_unit_system u, double m);
const char *kl_units_long_length_name(kl_unit_system u);
double kl_units_short_length(kl_unit_system u, double m);
const char *kl_units_short_length_name(kl_unit_system u);

#endif
