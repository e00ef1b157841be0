/* kilter: the plausible range of every physical quantity the loader reads.
 *
 * A value outside its hard limits is refused with a located message naming
 * the value, the element and the accepted range: such a number is a slip of
 * the unit or the exponent, and would reach the solver as an overflow (a
 * nominal voltage of 1e300 kV) or a singular matrix (a GMR of 1e-300 ft).
 * Between the hard limits and the usual band the trade has odd but real
 * values (a 400 Hz or 25 Hz system, a 230 kV source, a 100 km rural line):
 * those are accepted with a warning.
 *
 * The bands are wide on purpose.  Unless a row says otherwise they are
 * common practice: the span of what distribution and subtransmission
 * equipment is built as, widened by an order of magnitude or more for the
 * hard limits.  Each row is (element, key, quantity) -> limits in SI. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include "kilter/units.h"
#include "kl_io.h"

enum { R_ABS = 1 }; /* the limits apply to |x| (a coordinate, a complex value) */

typedef struct {
    const char *kind;  /* kl_ld_label's element kind ("" for the file's top level) */
    const char *key;   /* the key; NULL: any key of that kind and quantity */
    int q;             /* kl_quantity */
    int flags;         /* R_ABS */
    double hard_lo, hard_hi, warn_lo, warn_hi; /* SI (kV for the model's kV fields: see scale) */
    double scale;      /* display value = SI value * scale */
    const char *unit;  /* display unit */
    const char *what;  /* the quantity, for the message */
} kl_range;

#define BIG 1e300 /* no limit on that side */

/* Most specific rows first: the first row that matches is used. */
static const kl_range ranges[] = {
    /* source: nominal voltage, LV networks (0.208 kV) to the highest AC
     * transmission voltages in service (1100 kV, IEC 60038, from memory); a
     * distribution feeder is usually 0.2 to 69 kV */
    {"source", "nominal_voltage", KL_Q_VOLTAGE, 0, 50, 1.2e6, 200, 69e3, 1e-3, "kV", "a nominal voltage"},
    /* 50 and 60 Hz; 16.7 and 25 Hz (railways), 400 Hz (aircraft, ships) are real */
    {"source", "frequency", KL_Q_FREQUENCY, 0, 10, 1000, 45, 65, 1, "Hz", "a system frequency"},
    /* the source set point: ANSI C84.1 Range B is 0.9 to 1.058 pu at service (from memory);
     * a substation bus is held near 1.0 to 1.05 pu */
    {"source", "regulated_voltage", KL_Q_PER_UNIT, 0, 0.5, 1.5, 0.9, 1.1, 1, "pu", "a source voltage"},
    /* a phase angle: reduced to one turn by the loader; beyond ten turns it is
     * no angle anyone meant (1e15 deg is not even a whole number of degrees
     * apart from its neighbours in binary) */
    {"source", "angle", KL_Q_ANGLE, R_ABS, 0, 3600, 0, 360, 1, "deg", "a source angle"},
    {"source", "ground_relay_pickup", KL_Q_CURRENT, 0, 0.1, 1e5, 1, 5000, 1, "A", "a relay pickup current"},
    {"source", "short_circuit", KL_Q_POWER, 0, 1e5, 1e12, 1e6, 1e11, 1e-6, "MVA", "a short-circuit power"},
    {"source", "x_over_r", KL_Q_NUMBER, 0, 0.01, 1000, 0.5, 100, 1, "", "an X/R ratio"},
    {"source", NULL, KL_Q_IMPEDANCE, R_ABS, 0, 1e4, 0, 1000, 1, "ohm", "a source impedance"},
    /* conductors: 2000 kcmil Cu is 2e-5 ohm/m, #14 Cu 8e-3 ohm/m and a steel
     * guy strand some 0.01 ohm/m (from memory) */
    {"conductor", "resistance", KL_Q_OHM_PER_LENGTH, 0, 1e-6, 10, 1e-5, 0.05, 1e3, "ohm/km",
     "a conductor resistance"},
    {"conductor", "resistance_temperature", KL_Q_TEMPERATURE, 0, -60, 300, -40, 150, 1, "degC",
     "a conductor temperature"},
    /* a solid conductor's GMR is 0.7788 r (Kersting, eq. 4.14, from memory) */
    {"conductor", "gmr", KL_Q_LENGTH, 0, 1e-5, 1, 1e-4, 0.1, 1e3, "mm", "a conductor GMR"},
    {"conductor", "diameter", KL_Q_LENGTH, 0, 1e-4, 0.5, 1e-3, 0.1, 1e3, "mm", "a conductor diameter"},
    {"conductor", NULL, KL_Q_CURRENT, 0, 0.1, 1e5, 1, 5000, 1, "A", "an ampacity"}, /* and emergency */
    {"conductor", "area", KL_Q_AREA, 0, 1e-9, 1e-2, 1e-7, 3e-3, 1e6, "mm2", "a conductor area"},
    /* cables: concentric-neutral cables have some 6 to 40 strands */
    {"cable", "strands", KL_Q_NUMBER, 0, 1, 1000, 1, 200, 1, "", "a number of neutral strands"},
    {"cable", "tape_thickness", KL_Q_LENGTH, 0, 1e-6, 0.01, 1e-5, 2e-3, 1e3, "mm", "a tape thickness"},
    /* metals: 1.6e-8 (Ag) to some 1e-6 ohm m (stainless, lead alloys) */
    {"cable", "tape_resistivity", KL_Q_RESISTIVITY, 0, 1e-9, 1e-5, 1e-8, 1e-6, 1, "ohm-m",
     "a tape resistivity"},
    /* XLPE 2.3, EPR 3, paper 3.5 (from memory) */
    {"cable", "permittivity", KL_Q_NUMBER, 0, 1, 100, 1.5, 10, 1, "", "a relative permittivity"},
    {"cable", NULL, KL_Q_CURRENT, 0, 0.1, 1e5, 1, 5000, 1, "A", "an ampacity"},
    {"cable", NULL, KL_Q_LENGTH, 0, 1e-3, 0.5, 5e-3, 0.2, 1e3, "mm", "a cable diameter"},
    /* earth: sea water some 0.2 ohm m, rock 1e4 and more (IEEE Std 80, from memory) */
    {"", "earth_resistivity", KL_Q_RESISTIVITY, 0, 0.01, 1e6, 1, 1e4, 1, "ohm-m", "an earth resistivity"},
    {"construction", "earth_resistivity", KL_Q_RESISTIVITY, 0, 0.01, 1e6, 1, 1e4, 1, "ohm-m",
     "an earth resistivity"},
    /* a line's impedance and susceptance per length: overhead lines some
     * 0.3 to 1 ohm/km and 3 uS/km, cables to some 60 uS/km */
    {"construction", NULL, KL_Q_CURRENT, 0, 0.1, 1e5, 1, 5000, 1, "A", "an ampacity"},
    {"construction", NULL, KL_Q_OHM_PER_LENGTH, R_ABS, 0, 1, 0, 0.05, 1e3, "ohm/km", "a line impedance"},
    {"construction", NULL, KL_Q_S_PER_LENGTH, R_ABS, 0, 1e-5, 0, 5e-7, 1e9, "uS/km", "a line susceptance"},
    /* layouts: crossarm and pole positions, trench depths */
    {"layout", "x", KL_Q_LENGTH, R_ABS, 0, 1000, 0, 50, 1, "m", "a horizontal position"},
    {"layout", "height", KL_Q_LENGTH, 0, 0.1, 500, 3, 100, 1, "m", "a conductor height"},
    {"layout", "depth", KL_Q_LENGTH, 0, 1e-3, 100, 0.1, 10, 1, "m", "a burial depth"},
    /* plot coordinates: any unit, finite within what a drawing can scale */
    {"bus", NULL, KL_Q_NUMBER, R_ABS, 0, 1e9, 0, 1e9, 1, "", "a bus coordinate"},
    /* sections: a distribution line from a metre to some 100 km (long rural lines) */
    {"section", "length", KL_Q_LENGTH, 0, 1e-3, 1e6, 0.1, 1e5, 1e-3, "km", "a line length"},
    /* transformers: single-phase 5 kVA to substation 100 MVA and beyond */
    {"transformer", NULL, KL_Q_POWER, 0, 100, 1e10, 1e3, 5e8, 1e-3, "kVA", "a transformer rating"},
    {"transformer", "voltage", KL_Q_VOLTAGE, 0, 50, 1.2e6, 100, 230e3, 1e-3, "kV", "a winding voltage"},
    /* per-unit resistance some 0.5 to 2 %, reactance 2 to 12 %, no-load loss
     * 0.1 to 0.5 % (IEEE C57.12.00 ranges, from memory) */
    {"transformer", "resistance", KL_Q_SHARE, 0, 0, 0.5, 0, 0.1, 100, "%", "a transformer resistance"},
    {"transformer", "reactance", KL_Q_SHARE, 0, 1e-4, 1, 5e-3, 0.25, 100, "%", "a transformer reactance"},
    {"transformer", "no_load_loss", KL_Q_SHARE, 0, 0, 0.1, 0, 0.02, 100, "%", "a no-load loss"},
    /* step-voltage regulators: 32 steps of 5/8 % for +-10 % (ANSI/IEEE
     * C57.15, from memory; the 0.625 % step is the IEEE 13-node data
     * sheet's); the relay is on a 120 V base */
    {"regulator", "steps", KL_Q_NUMBER, 0, 1, 64, 4, 32, 1, "", "a number of regulator steps"},
    {"regulator", "step", KL_Q_SHARE, 0, 1e-4, 0.05, 3e-3, 0.0125, 100, "%", "a regulator step"},
    {"regulator", "voltage_level", KL_Q_VOLTAGE, 0, 60, 180, 110, 135, 1, "V", "a regulator voltage level"},
    {"regulator", "bandwidth", KL_Q_VOLTAGE, 0, 0.1, 24, 0.5, 6, 1, "V", "a regulator bandwidth"},
    {"regulator", "pt_ratio", KL_Q_NUMBER, 0, 1, 1e4, 2, 600, 1, "", "a PT ratio"},
    {"regulator", "ct_primary", KL_Q_CURRENT, 0, 1, 1e5, 5, 5000, 1, "A", "a CT primary current"},
    {"regulator", NULL, KL_Q_CURRENT, 0, 1, 1e5, 5, 5000, 1, "A", "a regulator current rating"},
    {"regulator", NULL, KL_Q_VOLTAGE, R_ABS, 0, 120, 0, 24, 1, "V", "a compensator setting"},
    /* loads and capacitors, per phase: a house some kVA, a large plant tens of MVA */
    {"load", NULL, KL_Q_POWER, R_ABS, 0, 1e9, 0, 5e7, 1e-3, "kVA", "a load per phase"},
    /* shares of a load: the zip fractions and the third harmonic, 0 to 100 % */
    {"load", NULL, KL_Q_SHARE, 0, 0, 1, 0, 1, 100, "%", "a share of the load"},
    {"load", "move_cost", KL_Q_NUMBER, 0, 0, 1e9, 0, 1e9, 1, "", "a move cost"},
    {"capacitor", "rated_voltage", KL_Q_VOLTAGE, 0, 50, 1.2e6, 100, 230e3, 1e-3, "kV", "a rated voltage"},
    {"capacitor", NULL, KL_Q_POWER, R_ABS, 0, 1e8, 0, 1e7, 1e-3, "kvar", "a capacitor per phase"},
};
#define NRANGES ((int)(sizeof ranges / sizeof ranges[0]))

static int matches(const kl_range *r, const char *kind, const char *key, int q)
{
    return r->q == q && strcmp(r->kind, kind) == 0 && (!r->key || strcmp(r->key, key) == 0);
}

/* The row for (kind, key, q), or NULL.  Called for every value of every
 * element, so the answer is cached by the pointers of the kind and the key,
 * which are literals and key tables of the loader (the same text at another
 * address only costs a second look-up). */
static const kl_range *find(kl_range_slot *cache, const char *kind, const char *key, int q)
{
    uintptr_t h = ((uintptr_t)kind >> 3) * 31u + ((uintptr_t)key >> 3) * 7u + (uintptr_t)q;
    kl_range_slot *s = &cache[h % KL_RANGE_CACHE];
    int i;
    if (s->kind == kind && s->key == key && s->q == q && s->row != 0)
        return s->row > 0 ? &ranges[s->row - 1] : NULL;
    for (i = 0; i < NRANGES && !matches(&ranges[i], kind, key, q); i++)
        ;
    s->kind = kind;
    s->key = key;
    s->q = q;
    s->row = i < NRANGES ? i + 1 : -1;
    return i < NRANGES ? &ranges[i] : NULL;
}

static void range_text(const kl_range *r, double lo, double hi, char *buf, size_t n)
{
    const char *sp = r->unit[0] ? " " : "";
    if (r->flags & R_ABS)
        snprintf(buf, n, "%.6g%s%s in magnitude at most", hi * r->scale, sp, r->unit);
    else
        snprintf(buf, n, "%.6g to %.6g%s%s", lo * r->scale, hi * r->scale, sp, r->unit);
}

int kl_ld_range_judge(kl_range_slot *cache, const char *kind, const char *key, int q, double x,
                      const char **what, char *span, size_t n)
{
    const kl_range *r = find(cache, kind ? kind : "", key, q);
    double v = x;
    if (!r)
        return 0;
    if (r->flags & R_ABS)
        v = fabs(x);
    *what = r->what;
    if (!(v >= r->hard_lo && v <= r->hard_hi)) {
        range_text(r, r->hard_lo, r->hard_hi, span, n);
        return 2;
    }
    if (v < r->warn_lo || v > r->warn_hi) {
        range_text(r, r->warn_lo, r->warn_hi, span, n);
        return 1;
    }
    return 0;
}
