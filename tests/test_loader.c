/* Feeder loader: one test per class of input error (each message must give
 * the line and column of the offending text, the element and what was
 * expected), round trips of valid feeders to SI values, and allocation
 * failure at every allocation.  The rules checked are those of the format
 * specification, feeders/README.md; unit factors are NIST SP 811 (2008) B.8. */
#include <check.h>
#include <stdarg.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/feeder.h"
#include "kl_io.h"

#if defined(__SANITIZE_ADDRESS__)
/* A pointer kept to a returned function's local buffer reads as a stack use
 * after return only with fake stack frames, off by default in GCC 12's ASan. */
const char *__asan_default_options(void);
const char *__asan_default_options(void)
{
    return "detect_stack_use_after_return=1";
}
#endif

#define HEAD \
    "kilter-feeder: 1\n"                                                                      /* 1 */ \
    "name: t\n"                                                                               /* 2 */ \
    "source: {bus: sub, nominal_voltage: 12.47 kV}\n"                                         /* 3 */ \
    "conductors:\n"                                                                           /* 4 */ \
    "  - {name: c1, resistance: 0.3 ohm/mi, gmr: 0.01 ft, diameter: 0.5 in, ampacity: 300 A}\n" /* 5 */ \
    "layouts:\n"                                                                              /* 6 */ \
    "  - name: l1\n"                                                                          /* 7 */ \
    "    positions:\n"                                                                        /* 8 */ \
    "      - {id: \"1\", x: 0 ft, height: 28 ft}\n"                                           /* 9 */ \
    "      - {id: \"2\", x: 2 ft, height: 28 ft}\n"                                           /* 10 */ \
    "      - {id: \"3\", x: 4 ft, height: 28 ft}\n"                                           /* 11 */ \
    "constructions:\n"                                                                        /* 12 */ \
    "  - {name: k3, layout: l1, phase_conductor: c1, phases: {a: \"1\", b: \"2\", c: \"3\"}}\n" /* 13 */ \
    "  - {name: kac, layout: l1, phase_conductor: c1, phases: {a: \"1\", c: \"3\"}}\n"         /* 14 */ \
    "sections:\n"                                                                             /* 15 */

static kl_errors err;
static kl_feeder *fd;

static kl_status load_text(const char *text)
{
    kl_errors_clear(&err);
    kl_feeder_free(fd);
    fd = NULL;
    return kl_feeder_load_buffer(text, strlen(text), "t.yaml", &fd, &err);
}

static void setup(void)
{
    kl_errors_init(&err);
    fd = NULL;
}

static void teardown(void)
{
    kl_feeder_free(fd);
    kl_errors_free(&err);
}

/* 1-based column of needle on 1-based line `line` of text. */
static int col_of(const char *text, int line, const char *needle)
{
    const char *p = text, *end, *hit;
    int l;
    for (l = 1; l < line && p; l++) {
        p = strchr(p, '\n');
        if (p)
            p++;
    }
    ck_assert_ptr_nonnull(p);
    end = strchr(p, '\n');
    hit = strstr(p, needle);
    ck_assert_msg(hit && (!end || hit < end), "'%s' not on line %d", needle, line);
    return (int)(hit - p) + 1;
}

static void dump(void)
{
    int i;
    char buf[1400];
    for (i = 0; i < err.count; i++) {
        kl_error_format(&err.items[i], buf, sizeof buf);
        fprintf(stderr, "  %s\n", buf);
    }
}

/* An error at line:col whose element contains `element` and whose message
 * contains each of the NULL-terminated words. */
static void expect_error(int line, int col, const char *element, ...)
{
    int i;
    for (i = 0; i < err.count; i++) {
        const kl_error_item *it = &err.items[i];
        va_list ap;
        const char *w;
        int ok = it->line == line && (col == 0 || it->col == col) && strstr(it->element, element) &&
                 strcmp(it->file, "t.yaml") == 0;
        va_start(ap, element);
        while (ok && (w = va_arg(ap, const char *)))
            ok = strstr(it->message, w) != NULL;
        va_end(ap);
        if (ok)
            return;
    }
    dump();
    ck_abort_msg("no error at %d:%d for '%s'", line, col, element);
}

START_TEST(yaml_syntax)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: k3\n"
                         "  - {name: s2\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    ck_assert_ptr_null(fd);
    ck_assert_int_ge(err.count, 1);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "YAML syntax error"));
    ck_assert_int_ge(err.items[0].line, 16); /* at or after the unclosed '{' */
}
END_TEST

START_TEST(unknown_key)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, lenght: 10 ft, construction: k3}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(16, col_of(t, 16, "lenght"), "section \"s1\"", "unknown key 'lenght'", "did you mean 'length'", NULL);
    expect_error(16, 5, "section \"s1\"", "missing required key 'length'", NULL);
}
END_TEST

START_TEST(unknown_top_key)
{
    const char *t = "kilter-feeder: 1\nname: t\nsorce: {bus: sub}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(3, 1, "", "unknown top-level key 'sorce'", "did you mean 'source'", NULL);
}
END_TEST

START_TEST(units_missing_and_unknown)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10, construction: k3}\n"
                         "  - {name: s2, from: b1, to: b2, length: 10 furlong, construction: k3}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(16, col_of(t, 16, "10,"), "section \"s1\"", "missing unit", "ft", "mi", NULL);
    expect_error(17, col_of(t, 17, "10 furlong"), "section \"s2\"", "unknown length unit 'furlong'", "km", NULL);
}
END_TEST

START_TEST(non_positive)
{
    const char *t = "kilter-feeder: 1\nsource: {bus: sub, nominal_voltage: 12.47 kV}\nconductors:\n"
                    "  - {name: c1, resistance: 0.3 ohm/mi, gmr: 0 ft, diameter: -0.5 in}\n"
                    "cables:\n"
                    "  - {name: cn, kind: concentric-neutral, conductor: c1, neutral_strand: c1, strands: 0, "
                    "diameter_over_neutral: 1 in}\n"
                    "sections:\n  - {from: sub, to: b1, switch: closed}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(4, col_of(t, 4, "0 ft"), "conductor \"c1\"", "'gmr' must be greater than zero", NULL);
    expect_error(4, col_of(t, 4, "-0.5"), "conductor \"c1\"", "'diameter' must be greater than zero", NULL);
    expect_error(6, col_of(t, 6, "0, diam"), "cable \"cn\"", "'strands' must be greater than zero", NULL);
}
END_TEST

START_TEST(duplicates)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: k3}\n"
                         "  - {name: s1, from: b1, to: b2, length: 10 ft, construction: k3}\n"
                         "buses:\n  - {name: b1}\n  - {name: b1}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(17, col_of(t, 17, "s1"), "section \"s1\"", "duplicate name", NULL);
    expect_error(20, col_of(t, 20, "b1"), "bus \"b1\"", "duplicate name", NULL);
}
END_TEST

/* Issue 14, defect 1: an element whose default name (from-to, load-N) is a
 * duplicate, with a further problem of its own.  The label of that second
 * message used to point into the naming function's dead stack frame (the
 * sanitizer build reads it as a stack use after return, see
 * __asan_default_options below; the release build printed whatever the
 * frame held by then). */
START_TEST(duplicate_default_names_label)
{
    const char *t = "kilter-feeder: 1\nsource: {bus: sub, nominal_voltage: 12.47 kV}\n"   /* 1-2 */
                    "sections:\n"                                                            /* 3 */
                    "  - {from: sub, to: b1, switch: closed}\n"                              /* 4 */
                    "  - {from: sub, to: b1, switch: shut}\n"                                /* 5 */
                    "loads:\n"                                                               /* 6 */
                    "  - {name: load-2, bus: b1, power: {a: 10 kVA}}\n"                      /* 7 */
                    "  - {bus: b1, power: {a: 10 kVA}, model: zap}\n"                        /* 8 */
                    "capacitors:\n"                                                          /* 9 */
                    "  - {name: capacitor-2, bus: b1, reactive_power: {a: 10 kvar}}\n"       /* 10 */
                    "  - {bus: b1, reactive_power: {a: 10 kvar}, connection: zig}\n";        /* 11 */
    int i;
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(5, 5, "section \"sub-b1\"", "duplicate name", NULL);
    expect_error(5, col_of(t, 5, "shut"), "section \"sub-b1\"", "'switch' cannot be 'shut'", NULL);
    expect_error(8, 5, "load \"load-2\"", "duplicate name", NULL);
    expect_error(8, col_of(t, 8, "zap"), "load \"load-2\"", "'model' cannot be 'zap'", NULL);
    expect_error(11, 5, "capacitor \"capacitor-2\"", "duplicate name", NULL);
    expect_error(11, col_of(t, 11, "zig"), "capacitor \"capacitor-2\"", "'connection' cannot be 'zig'", NULL);
    for (i = 0; i < err.count; i++) /* every label printable: no bytes of a dead frame */
        for (const char *c = err.items[i].element; *c; c++)
            ck_assert_msg(*c >= ' ' && *c < 127, "label of message %d: byte 0x%02x", i, (unsigned char)*c);
}
END_TEST

/* Issue 14, defect 6: names holding NUL or control characters (YAML escapes
 * in double-quoted scalars) are refused where they are written, and no
 * message carries such a byte raw (ECMA-48 5.2: ESC and CSI act on the
 * terminal the message is printed on). */
START_TEST(control_characters_in_names)
{
    const char *t = "kilter-feeder: 1\nsource: {bus: sub, nominal_voltage: 12.47 kV}\n"                  /* 1-2 */
                    "sections:\n"                                                                        /* 3 */
                    "  - {name: \"s\\e[2J1\", from: sub, to: b1, switch: closed}\n"                     /* 4 */
                    "  - {name: s2, from: b1, to: \"b2\\0b3\", switch: closed}\n"                        /* 5 */
                    "  - {name: s3, from: b1, to: \"b\\u009b31m4\", switch: \"open\\a\"}\n"              /* 6 */
                    "buses:\n"                                                                           /* 7 */
                    "  - {name: b1, description: \"tab\\there\\nand a second line\"}\n"                  /* 8 */
                    "loads:\n"                                                                           /* 9 */
                    "  - {name: \"l\\x07\", bus: b1, power: {a: 10 kVA}, description: \"x\\ey\"}\n";   /* 10 */
    int i;
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(4, col_of(t, 4, "\"s\\e"), "section", "'name' holds a control character", "0x1B",
                 "byte 2", NULL);
    expect_error(5, col_of(t, 5, "\"b2"), "section \"s2\"", "'to' holds a control character", "0x00",
                 "byte 3", NULL);
    expect_error(6, col_of(t, 6, "\"b\\u"), "section \"s3\"", "'to' holds a control character", "U+009B", NULL);
    expect_error(6, col_of(t, 6, "\"open"), "section \"s3\"", "cannot be 'open\\x07'", NULL);
    expect_error(10, col_of(t, 10, "\"l\\x"), "load", "'name' holds a control character", "0x07", NULL);
    expect_error(10, col_of(t, 10, "\"x\\e"), "load", "'description' holds a control character", "0x1B", NULL);
    for (i = 0; i < err.count; i++) { /* the description of b1 (tab, line feed) is free text: no message */
        const char *m = err.items[i].message, *e = err.items[i].element;
        ck_assert_msg(err.items[i].line != 8, "b1's description refused: %s", m);
        for (; *m; m++)
            ck_assert_msg((unsigned char)*m >= ' ' && *m != 0x7F && !((unsigned char)m[0] == 0xC2 &&
                          (unsigned char)m[1] < 0xA0), "message %d holds byte 0x%02x", i, (unsigned char)*m);
        for (; *e; e++)
            ck_assert_msg((unsigned char)*e >= ' ' && *e != 0x7F && !((unsigned char)e[0] == 0xC2 &&
                          (unsigned char)e[1] < 0xA0), "label %d holds byte 0x%02x", i, (unsigned char)*e);
    }
}
END_TEST

/* Issue 14, defect 3: absurd magnitudes (a slip of the exponent or the unit)
 * are refused where they are written, naming the value, the element and the
 * accepted range; odd but real values (a 400 Hz system, a 138 kV source) are
 * accepted with a located warning.  The ranges are those of
 * src/io/loader_ranges.c (common practice, sources there). */
START_TEST(absurd_magnitudes)
{
    const char *t = "kilter-feeder: 1\n"                                                          /* 1 */
                    "source: {bus: sub, nominal_voltage: 1e300 kV, frequency: 1e12 Hz}\n"         /* 2 */
                    "conductors:\n"                                                               /* 3 */
                    "  - {name: c1, resistance: 0.3 ohm/mi, gmr: 1e-300 ft, diameter: 0.5 in}\n"  /* 4 */
                    "constructions:\n"                                                            /* 5 */
                    "  - {name: m, impedance: {aa: 1e300 + j1 ohm/mi}}\n"                         /* 6 */
                    "sections:\n"                                                                 /* 7 */
                    "  - {name: s1, from: sub, to: b1, length: 1e300 ft, construction: m}\n"      /* 8 */
                    "  - {name: t1, from: b1, to: b2, transformer: x}\n"                          /* 9 */
                    "transformers:\n"                                                             /* 10 */
                    "  - {name: x, rating: 1e-300 kVA, high: {voltage: 12.47 kV, connection: delta},\n"
                    "     low: {voltage: 0.48 kV, connection: grounded-wye}, resistance: 1 %, reactance: 5 %}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(2, col_of(t, 2, "1e300"), "source", "'nominal_voltage' = 1e300 kV is outside",
                 "0.05 to 1200 kV", NULL);
    expect_error(2, col_of(t, 2, "1e12"), "source", "'frequency' = 1e12 Hz", "10 to 1000 Hz", NULL);
    expect_error(4, col_of(t, 4, "1e-300"), "conductor \"c1\"", "'gmr' = 1e-300 ft", "0.01 to 1000 mm", NULL);
    expect_error(6, col_of(t, 6, "1e300"), "construction \"m\"", "'aa' = 1e300 + j1 ohm/mi", "ohm/km", NULL);
    expect_error(8, col_of(t, 8, "1e300"), "section \"s1\"", "'length' = 1e300 ft", "km", NULL);
    expect_error(11, col_of(t, 11, "1e-300"), "transformer \"x\"", "'rating' = 1e-300 kVA", "kVA", NULL);
}
END_TEST

START_TEST(unusual_magnitudes_warned)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: k3}\n";
    char *u = malloc(strlen(t) + 64), *p;
    int i, warned = 0;
    ck_assert_ptr_nonnull(u);
    strcpy(u, t);
    p = strstr(u, "12.47 kV}");
    ck_assert_ptr_nonnull(p);
    memmove(p + strlen("138 kV, frequency: 400 Hz}"), p + strlen("12.47 kV}"), strlen(p + strlen("12.47 kV}")) + 1);
    memcpy(p, "138 kV, frequency: 400 Hz}", strlen("138 kV, frequency: 400 Hz}"));
    ck_assert_int_eq(load_text(u), KL_OK); /* accepted ... */
    for (i = 0; i < err.count; i++) /* ... with a located warning for each */
        if (err.items[i].warning && err.items[i].line == 3 && strstr(err.items[i].element, "source") &&
            (strstr(err.items[i].message, "'nominal_voltage' = 138 kV is unusual") ||
             strstr(err.items[i].message, "'frequency' = 400 Hz is unusual")))
            warned++;
    if (warned != 2)
        dump();
    ck_assert_int_eq(warned, 2);
    ck_assert_int_eq(err.count, 2);
    free(u);
}
END_TEST

/* Issue 14, defect 2: a source angle of many turns is reduced to one (the
 * phases stay 120 degrees apart to the last digit), an absurd one refused;
 * regulator settings whose ratio 1 + step x tap reaches zero, reverses or
 * runs away (step 6.25 % with tap -16, step 50 %, a billion steps) refused.
 * The regulating range of a step-voltage regulator is +-10 % in 16 steps of
 * 5/8 % each way (ANSI/IEEE C57.15, common practice). */
START_TEST(absurd_angle_and_regulator)
{
    const char *t = "kilter-feeder: 1\n"                                                          /* 1 */
                    "source: {bus: sub, nominal_voltage: 12.47 kV, angle: 1e15 deg}\n"            /* 2 */
                    "regulators:\n"                                                               /* 3 */
                    "  - {name: r1, step: 6.25 %, taps: {a: -16}}\n"                              /* 4 */
                    "  - {name: r2, steps: 16, step: 50 %}\n"                                     /* 5 */
                    "  - {name: r3, steps: 1000000000}\n"                                         /* 6 */
                    "  - {name: r4, steps: 48, step: 1.25 %}\n"                                   /* 7 */
                    "sections:\n"                                                                 /* 8 */
                    "  - {from: sub, to: b1, regulator: r1}\n"                                    /* 9 */
                    "  - {from: b1, to: b2, regulator: r2}\n"                                     /* 10 */
                    "  - {from: b2, to: b3, regulator: r3}\n"                                     /* 11 */
                    "  - {from: b3, to: b4, regulator: r4}\n";                                    /* 12 */
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(2, col_of(t, 2, "1e15"), "source", "'angle' = 1e15 deg is outside", "3600 deg", NULL);
    expect_error(4, col_of(t, 4, "6.25"), "regulator \"r1\"", "'step' = 6.25 % is outside", "0.01 to 5 %", NULL);
    expect_error(5, col_of(t, 5, "50 %"), "regulator \"r2\"", "'step' = 50 % is outside", NULL);
    expect_error(6, col_of(t, 6, "1000000000"), "regulator \"r3\"", "'steps' = 1000000000 is outside", NULL);
    expect_error(7, col_of(t, 7, "1.25"), "regulator \"r4\"", "48 steps of 1.25 % each way give a ratio from 0.4 to 1.6",
                 NULL);
}
END_TEST

START_TEST(angle_reduced)
{
    const char *t = "kilter-feeder: 1\nsource: {bus: sub, nominal_voltage: 12.47 kV, angle: -750 deg}\n"
                    "sections:\n  - {from: sub, to: b1, switch: closed}\n";
    int i;
    ck_assert_int_eq(load_text(t), KL_OK);
    ck_assert(fabs(fd->source.angle_deg - (-30.0)) < 1e-12); /* -750 = -2 x 360 - 30 */
    for (i = 0; i < err.count; i++) /* two turns: accepted, with a warning */
        if (err.items[i].warning && strstr(err.items[i].message, "'angle' = -750 deg is unusual"))
            break;
    ck_assert_int_lt(i, err.count);
}
END_TEST

START_TEST(unknown_references)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: k4}\n"
                         "  - {name: t1, from: b1, to: b2, transformer: xf9}\n"
                         "loads:\n  - {name: ld, bus: b77, power: {a: 1 kVA}}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(16, col_of(t, 16, "k4"), "section \"s1\"", "unknown construction 'k4'", "did you mean 'k3'", NULL);
    expect_error(17, col_of(t, 17, "xf9"), "section \"t1\"", "unknown transformer 'xf9'", "transformers:", NULL);
    expect_error(19, col_of(t, 19, "b77"), "load \"ld\"", "unknown bus 'b77'", NULL);
}
END_TEST

START_TEST(position_not_in_layout)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: kx}\n"
                         "constructions:\n";
    /* a second constructions: key is itself an error; use a self-contained file instead */
    const char *u = "kilter-feeder: 1\nsource: {bus: sub, nominal_voltage: 12.47 kV}\nconductors:\n"
                    "  - {name: c1, resistance: 0.3 ohm/mi, gmr: 0.01 ft, diameter: 0.5 in}\n"
                    "layouts:\n  - {name: l1, positions: [{id: \"1\", x: 0 ft, height: 28 ft}]}\n"
                    "constructions:\n  - {name: kx, layout: l1, phase_conductor: c1, phases: {a: \"1\", b: \"4\"}}\n"
                    "sections:\n  - {name: s1, from: sub, to: b1, length: 10 ft, construction: kx}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(17, 1, "", "given twice", NULL);
    ck_assert_int_eq(load_text(u), KL_EINPUT);
    expect_error(8, col_of(u, 8, "\"4\""), "construction \"kx\"", "position '4' is not in layout 'l1'", "'1'", NULL);
}
END_TEST

START_TEST(section_phases_not_in_construction)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: kac, phases: b}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(16, 5, "section \"s1\"", "phases 'b'", "construction 'kac'", "has ac", NULL);
}
END_TEST

START_TEST(phase_absent_upstream)
{
    /* a phase-b tap off an a-c section */
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: kac}\n"
                         "  - {name: s2, from: b1, to: b2, length: 10 ft, construction: k3, phases: b}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(17, 5, "section \"s2\"", "phases 'b'", "upstream bus 'b1'", "has 'ac'", NULL);
}
END_TEST

START_TEST(phase_absent_upstream_said_once)
{
    /* the sections below a wrong tap are not blamed for it: one error, at the tap */
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: kac}\n"
                         "  - {name: s2, from: b1, to: b2, length: 10 ft, construction: k3, phases: b}\n"
                         "  - {name: s3, from: b2, to: b3, length: 10 ft, construction: k3, phases: b}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    ck_assert_int_eq(err.count, 1);
    expect_error(17, 5, "section \"s2\"", "phases 'b'", "upstream bus 'b1'", NULL);
}
END_TEST

START_TEST(load_on_absent_phase)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: kac}\n"
                         "loads:\n  - {name: ld, bus: b1, power: {b: 10 kVA}}\n"
                         "  - {name: dl, bus: b1, connection: delta, power: {bc: 10 kVA}}\n"
                         "capacitors:\n  - {name: cp, bus: b1, reactive_power: {b: 100 kvar}}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(18, 5, "load \"ld\"", "phase 'b'", "bus 'b1' has only 'ac'", NULL);
    expect_error(19, 5, "load \"dl\"", "phases 'bc'", NULL);
    expect_error(21, 5, "capacitor \"cp\"", "phase 'b'", NULL);
}
END_TEST

START_TEST(closed_loop)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: k3}\n"
                         "  - {name: s2, from: b1, to: b2, length: 10 ft, construction: k3}\n"
                         "  - {name: s3, from: b2, to: sub, length: 10 ft, construction: k3}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    /* breadth-first from sub: s1 and s3 are reached first, s2 closes the loop */
    expect_error(17, 5, "section \"s2\"", "closes a loop", "radial", NULL);
    /* the same loop is accepted when the feeder is declared meshed */
    {
        char buf[4096];
        snprintf(buf, sizeof buf, "kilter-feeder: 1\nradial: false\n%s", t + strlen("kilter-feeder: 1\n"));
        ck_assert_int_eq(load_text(buf), KL_OK);
    }
}
END_TEST

START_TEST(islands)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: k3}\n"
                         "  - {name: s2, from: x1, to: x2, length: 10 ft, construction: k3}\n"
                         "  - {name: s3, from: x2, to: x3, length: 10 ft, construction: k3}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(17, col_of(t, 17, "x1"), "bus \"x1\"", "3 buses cannot be reached", "'sub'", "'x1', 'x2', 'x3'", NULL);
}
END_TEST

START_TEST(device_direction)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: k3}\n"
                         "  - {name: t1, from: b2, to: b1, transformer: xf}\n"
                         "  - {name: s3, from: b3, to: b1, length: 10 ft, construction: k3}\n"
                         "transformers:\n  - {name: xf, rating: 500 kVA, high: {voltage: 12.47 kV, connection: delta},"
                         " low: {voltage: 0.48 kV, connection: grounded-wye}, resistance: 1 %, reactance: 5 %}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(17, 5, "section \"t1\"", "'from' must be the source side", "'b1'", NULL);
    ck_assert_int_eq(err.count, 1); /* a line written load side first (s3) is fine */
}
END_TEST

START_TEST(anchors_rejected)
{
    const char *t = HEAD "  - &x {name: s1, from: sub, to: b1, length: 10 ft, construction: k3}\n"
                         "  - *x\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    expect_error(16, col_of(t, 16, "&x"), "", "anchors and aliases", NULL);
}
END_TEST

START_TEST(version_key)
{
    ck_assert_int_eq(load_text("name: t\nsource: {bus: sub, nominal_voltage: 1 kV}\nsections: []\n"), KL_EINPUT);
    expect_error(1, 1, "", "begins with 'kilter-feeder: 1'", NULL);
    ck_assert_int_eq(load_text("kilter-feeder: 7\nsource: {bus: sub, nominal_voltage: 1 kV}\n"
                               "sections:\n  - {from: sub, to: b, switch: closed}\n"), KL_EINPUT);
    expect_error(1, 16, "", "version 1", "says 7", NULL);
}
END_TEST

START_TEST(size_bound)
{
    char path[] = "/tmp/kilter-size-XXXXXX";
    int fdn = mkstemp(path);
    FILE *f;
    kl_feeder *out = NULL;
    ck_assert_int_ge(fdn, 0);
    f = fdopen(fdn, "w");
    fputs(HEAD "  - {name: s1, from: sub, to: b1, length: 10 ft, construction: k3}\n", f);
    fclose(f);
    ck_assert_int_eq(kl_feeder_load_limit(path, 100, &out, &err), KL_EINPUT);
    ck_assert_ptr_null(out);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "over the limit of 100 bytes"));
    kl_errors_clear(&err);
    ck_assert_int_eq(kl_feeder_load_limit(path, 1 << 20, &out, &err), KL_OK);
    kl_feeder_free(out);
    remove(path);
    ck_assert_int_eq(kl_feeder_load("/nonexistent/feeder.yaml", &out, &err), KL_EIO);
}
END_TEST

START_TEST(all_errors_reported)
{
    const char *t = HEAD "  - {name: s1, from: sub, to: b1, length: -1 ft, construction: k3}\n"
                         "  - {name: s2, from: b1, to: b2, length: 1 parsec, construction: k3}\n"
                         "  - {name: s3, from: b2, to: b3, length: 5 ft, construction: k3, colour: red}\n";
    ck_assert_int_eq(load_text(t), KL_EINPUT);
    ck_assert_int_eq(err.count, 3); /* all three, not just the first */
}
END_TEST

#define DATA KILTER_SOURCE_DIR "/tests/data/"

static void near(double got, double want, double rel)
{
    ck_assert_msg(fabs(got - want) <= rel * fabs(want), "got %.17g, want %.17g", got, want);
}

START_TEST(round_trip_small)
{
    const kl_feeder *f;
    int i;
    ck_assert_int_eq(kl_feeder_load(DATA "good-small.yaml", &fd, &err), KL_OK);
    f = fd;
    ck_assert_int_eq(err.count, 0);
    ck_assert_str_eq(f->name, "Hollowmere test feeder");
    ck_assert_int_eq(f->nconductors, 4);
    ck_assert_int_eq(f->ncables, 1);
    ck_assert_int_eq(f->nlayouts, 2);
    ck_assert_int_eq(f->nconstructions, 3);
    ck_assert_int_eq(f->nbuses, 9);
    ck_assert_int_eq(f->nsections, 8);
    ck_assert_int_eq(f->nloads, 4);
    ck_assert_int_eq(f->ncapacitors, 2);
    /* 0.1859 ohm/mi, 0.0313 ft, 0.927 in: NIST SP 811 B.8 exact factors */
    near(f->conductors[0].r_ohm_per_m, 0.1859 / 1609.344, 1e-12);
    near(f->conductors[0].gmr_m, 0.0313 * 0.3048, 1e-12);
    near(f->conductors[0].diameter_m, 0.927 * 0.0254, 1e-12);
    near(f->conductors[0].r_temp_c, 50, 0);                    /* default in feeders/README.md */
    near(f->earth_resistivity_ohm_m, 100, 0);
    near(f->layouts[1].y_m[0], -4 * 0.3048, 1e-12);            /* underground: minus depth */
    near(f->source.kv_ll, 4.16, 1e-12);
    ck_assert(cabs(f->source.z0_ohm - (0.6 + 6.3 * I)) < 1e-12);
    /* construction derived fields */
    ck_assert_int_eq(f->constructions[0].phases, KL_PH_ABC);
    ck_assert_int_eq(f->constructions[0].phase_wire[0], 1);   /* a on position "2" */
    ck_assert_int_eq(f->constructions[0].neutral_wire[0], 3);
    near(f->constructions[0].ampacity_a, 730, 0);
    near(f->constructions[0].neutral_ampacity_a, 340, 0);
    near(f->constructions[1].neutral_ampacity_a, 13 * 20, 0);  /* strands x strand ampacity */
    near(f->constructions[1].ampacity_a, 260, 0);
    ck_assert_int_eq(f->constructions[2].kind, KL_CONS_MATRIX);
    ck_assert_int_eq(f->constructions[2].phases, KL_PH_A | KL_PH_C);
    ck_assert(cabs(f->constructions[2].z_given[2][0] - (0.2066 + 0.4591 * I) / 1609.344) < 1e-15);
    near(f->constructions[2].b_given[0][2], -1.0135e-6 / 1609.344, 1e-12);
    near(f->cables[0].insulation_permittivity, 2.3, 0);        /* default */
    /* topology */
    i = kl_feeder_find_bus(f, "b2");
    ck_assert_int_eq(f->buses[i].phases, KL_PH_A | KL_PH_C);
    ck_assert_int_eq(f->sections[kl_feeder_find_section(f, "s2")].reversed, 1);
    ck_assert_int_eq(f->buses[kl_feeder_find_bus(f, "b3")].phases, KL_PH_C);
    near(f->buses[kl_feeder_find_bus(f, "b6")].base_kv_ll, 0.48, 1e-12); /* 4.16 kV x 0.48/4.16 */
    ck_assert_int_eq(kl_feeder_tree_live(f->tree, kl_feeder_find_bus(f, "b7")), 0);   /* beyond open sw2 */
    ck_assert_int_eq(kl_feeder_tree_live(f->tree, kl_feeder_find_bus(f, "b5")), 1);
    ck_assert_str_eq(f->buses[kl_feeder_find_bus(f, "sub")].description, "Hollowmere substation");
    /* regulator defaults and values */
    ck_assert_int_eq(f->regulators[0].steps, 16);
    near(f->regulators[0].step_pu, 0.00625, 1e-12);
    ck_assert_int_eq(f->regulators[0].tap[2], -1);
    near(f->regulators[0].ldc_r_v[1], 3, 0);
    /* loads */
    i = kl_feeder_find_load(f, "shop-12");
    ck_assert(cabs(f->loads[i].s_va[0] - (160e3 + 110e3 * I)) < 1e-6);
    near(f->loads[i].zip[0], 0.3, 1e-12);
    near(f->loads[i].third_harmonic, 0.15, 1e-12);
    ck_assert_int_eq(f->loads[i].pinned, 1);
    i = kl_feeder_find_load(f, "res-2");
    ck_assert_int_eq(f->loads[i].phases, 4); /* delta ca */
    ck_assert_int_eq(f->loads[i].forbidden, KL_PH_B);
    near(f->loads[kl_feeder_find_load(f, "res-3")].move_cost, 1, 0);
    ck_assert_int_eq(f->loads[kl_feeder_find_load(f, "dist-1")].section, kl_feeder_find_section(f, "s1"));
    near(f->transformers[0].r_pu, 0.011, 1e-12);
}
END_TEST

START_TEST(round_trip_demo)
{
    const kl_feeder *f;
    double pa = 0, pb = 0, pc = 0;
    int i;
    ck_assert_int_eq(kl_feeder_load(KILTER_SOURCE_DIR "/feeders/demo/quillmere-f3.yaml", &fd, &err), KL_OK);
    f = fd;
    /* counts stated in feeders/demo/README.md */
    ck_assert_int_eq(f->nbuses, 160);
    ck_assert_int_eq(f->nsections, 159);
    ck_assert_int_eq(f->nloads, 137);
    for (i = 0; i < f->nloads; i++) {
        const kl_load *d = &f->loads[i];
        if (d->conn == KL_CONN_WYE) {
            pa += creal(d->s_va[0]);
            pb += creal(d->s_va[1]);
            pc += creal(d->s_va[2]);
        } else {
            pa += (creal(d->s_va[0]) + creal(d->s_va[2])) / 2;
            pb += (creal(d->s_va[0]) + creal(d->s_va[1])) / 2;
            pc += (creal(d->s_va[1]) + creal(d->s_va[2])) / 2;
        }
    }
    /* README: about 5.4 MW; about 2.5 MW on a against 1.4 and 1.5 MW on b and c */
    near(pa + pb + pc, 5.4e6, 0.05);
    near(pa, 2.5e6, 0.05);
    near(pb, 1.4e6, 0.05);
    near(pc, 1.5e6, 0.05);
}
END_TEST

/* Fail each allocation in turn: the loader must report KL_ENOMEM and free
 * everything (the sanitizer build checks for leaks). */
/* Issue 14, defect 3, for every quantity at once: each value with a unit in
 * tests/data/good-small.yaml (every element kind), replaced in turn by 1e30
 * in its own unit, must be refused at its own line and column (every
 * physical quantity the loader reads has a range; the file is the loader's
 * round-trip fixture, which holds one of each key). */
START_TEST(every_quantity_has_a_range)
{
    FILE *f = fopen(DATA "good-small.yaml", "rb");
    char *text, *buf;
    long size, p;
    int cases = 0;
    ck_assert_ptr_nonnull(f);
    fseek(f, 0, SEEK_END);
    size = ftell(f);
    rewind(f);
    text = malloc((size_t)size + 1);
    buf = malloc((size_t)size + 64);
    ck_assert_ptr_nonnull(text);
    ck_assert_ptr_nonnull(buf);
    ck_assert_int_eq((long)fread(text, 1, (size_t)size, f), size);
    text[size] = '\0';
    fclose(f);
    for (p = 1; p < size; p++) {
        long e = p, start, line = 1, col = 1, k, i;
        int found = 0;
        if (!(text[p] >= '0' && text[p] <= '9') || !(text[p - 1] == ' ' || (text[p - 1] == '-' && text[p - 2] == ' ')))
            continue;
        while (e < size && ((text[e] >= '0' && text[e] <= '9') || text[e] == '.'))
            e++;
        /* a value with a unit ("28 ft", "2 %") or the real part of a complex one ("160 + j110 kVA") */
        if (!(text[e] == ' ' && ((text[e + 1] >= 'a' && text[e + 1] <= 'z') || (text[e + 1] >= 'A' && text[e + 1] <= 'Z') ||
                                 text[e + 1] == '%' || ((text[e + 1] == '+' || text[e + 1] == '-') && text[e + 3] == 'j'))))
            continue;
        start = text[p - 1] == '-' ? p - 1 : p;
        for (k = 0; k < start; k++) {
            col = text[k] == '\n' ? 1 : col + 1;
            line += text[k] == '\n';
        }
        memcpy(buf, text, (size_t)p);
        memcpy(buf + p, "1e30", 4);
        memcpy(buf + p + 4, text + e, (size_t)(size - e) + 1);
        ck_assert_int_eq(load_text(buf), KL_EINPUT);
        for (i = 0; i < err.count && !found; i++)
            found = !err.items[i].warning && err.items[i].line == line && err.items[i].col == col;
        if (!found)
            dump();
        ck_assert_msg(found, "1e30 for the value at %ld:%ld ('%.20s') not refused there", line, col, text + start);
        cases++;
    }
    ck_assert_int_ge(cases, 60);
    free(text);
    free(buf);
}
END_TEST

START_TEST(allocation_failures)
{
    char *text;
    FILE *f = fopen(DATA "good-small.yaml", "rb");
    long size, n, total;
    kl_status s;
    ck_assert_ptr_nonnull(f);
    fseek(f, 0, SEEK_END);
    size = ftell(f);
    rewind(f);
    text = malloc((size_t)size);
    ck_assert_ptr_nonnull(text);
    ck_assert_int_eq((long)fread(text, 1, (size_t)size, f), size);
    fclose(f);
    n = kl_alloc_count();
    ck_assert_int_eq(kl_feeder_load_buffer(text, (size_t)size, "t.yaml", &fd, &err), KL_OK);
    total = kl_alloc_count() - n;
    kl_feeder_free(fd);
    fd = NULL;
    for (n = 0; n < total; n++) {
        kl_errors_clear(&err);
        kl_alloc_fail_after(n);
        s = kl_feeder_load_buffer(text, (size_t)size, "t.yaml", &fd, &err);
        kl_alloc_fail_after(-1);
        ck_assert_msg(s == KL_ENOMEM, "allocation %ld of %ld failed but status %d", n, total, s);
        ck_assert_ptr_null(fd);
    }
    free(text);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("loader");
    TCase *tc = tcase_create("errors"), *rt = tcase_create("round trip");
    SRunner *sr;
    int failed;
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_checked_fixture(rt, setup, teardown);
    tcase_add_test(tc, yaml_syntax);
    tcase_add_test(tc, unknown_key);
    tcase_add_test(tc, unknown_top_key);
    tcase_add_test(tc, units_missing_and_unknown);
    tcase_add_test(tc, non_positive);
    tcase_add_test(tc, duplicates);
    tcase_add_test(tc, duplicate_default_names_label);
    tcase_add_test(tc, control_characters_in_names);
    tcase_add_test(tc, absurd_magnitudes);
    tcase_add_test(tc, unusual_magnitudes_warned);
    tcase_add_test(tc, absurd_angle_and_regulator);
    tcase_add_test(tc, angle_reduced);
    tcase_add_test(tc, unknown_references);
    tcase_add_test(tc, position_not_in_layout);
    tcase_add_test(tc, section_phases_not_in_construction);
    tcase_add_test(tc, phase_absent_upstream);
    tcase_add_test(tc, phase_absent_upstream_said_once);
    tcase_add_test(tc, load_on_absent_phase);
    tcase_add_test(tc, closed_loop);
    tcase_add_test(tc, islands);
    tcase_add_test(tc, device_direction);
    tcase_add_test(tc, anchors_rejected);
    tcase_add_test(tc, version_key);
    tcase_add_test(tc, size_bound);
    tcase_add_test(tc, all_errors_reported);
    tcase_add_test(rt, round_trip_small);
    tcase_add_test(rt, round_trip_demo);
    tcase_add_test(rt, every_quantity_has_a_range);
    tcase_add_test(rt, allocation_failures);
    tcase_set_timeout(rt, 300);
    suite_add_tcase(s, tc);
    suite_add_tcase(s, rt);
    sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
