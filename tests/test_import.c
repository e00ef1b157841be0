/* Tests of the feeder import (src/io/feeder_import.c, csv_read.c) in the
 * library: a small feeder from tables, line for line; every allocation
 * failing in turn gives KL_ENOMEM and nothing written, never a crash, a leak
 * or another status. */
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "kilter/import.h"
#include "kl_base.h"

static char dir[] = "/tmp/kilter-import-XXXXXX";
static char lib[300], buses[300], sections[300], loads[300];

static void put_file(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    fputs(text, f);
    fclose(f);
}

static void setup(void)
{
    ck_assert_ptr_nonnull(mkdtemp(dir));
    snprintf(lib, sizeof lib, "%s/lib.yaml", dir);
    snprintf(buses, sizeof buses, "%s/buses.csv", dir);
    snprintf(sections, sizeof sections, "%s/sections.csv", dir);
    snprintf(loads, sizeof loads, "%s/loads.csv", dir);
    put_file(lib, "kilter-feeder: 1\nname: t\n"
                  "source: {bus: s, nominal_voltage: 12.47 kV}\n"
                  "conductors:\n"
                  "  - {name: c1, resistance: 0.3 ohm/mi, gmr: 0.025 ft, diameter: 0.7 in, ampacity: 500 A}\n"
                  "layouts:\n"
                  "  - {name: l1, positions: [{id: \"1\", x: 0 ft, height: 28 ft}]}\n"
                  "constructions:\n"
                  "  - {name: k1, layout: l1, phase_conductor: c1, phases: {a: \"1\"}}\n");
    put_file(buses, "name,x,y,description\ns,0,0,\"the source, here\"\n");
    put_file(sections, "name,from,to,length_ft,construction\ns-b,s,b,1000,k1\n");
    put_file(loads, "name,bus,phase,kw,kvar\nl1,b,a,100,-20\n");
}

static void teardown(void)
{
    unlink(lib);
    unlink(buses);
    unlink(sections);
    unlink(loads);
    rmdir(dir);
}

static kl_status import(char **text, size_t *len, kl_errors *err)
{
    kl_import_tables in = { lib, NULL, NULL, buses, sections, loads, NULL };
    FILE *o = open_memstream(text, len);
    ck_assert_ptr_nonnull(o);
    kl_status st = kl_import_feeder(o, &in, err);
    fclose(o);
    return st;
}

/* One line per row, the values as the cells give them. */
START_TEST(small_feeder_line_for_line)
{
    kl_errors err;
    kl_errors_init(&err);
    char *text = NULL;
    size_t len = 0;
    ck_assert_int_eq(import(&text, &len, &err), KL_OK);
    ck_assert_ptr_nonnull(strstr(text, "buses:\n  - {name: s, x: 0, y: 0, description: \"the source, here\"}\n"));
    ck_assert_ptr_nonnull(strstr(text, "sections:\n  - {name: s-b, from: s, to: b, construction: k1, length: 1000 ft}\n"));
    ck_assert_ptr_nonnull(strstr(text, "loads:\n  - {name: l1, bus: b, power: {a: 100 - j20 kVA}}\n"));
    free(text);
    kl_errors_free(&err);
}
END_TEST

/* Every allocation failing in turn: out of memory, said once, nothing written. */
START_TEST(allocation_failures)
{
    kl_errors err;
    kl_errors_init(&err);
    char *text = NULL;
    size_t len = 0;
    long n0 = kl_alloc_count();
    ck_assert_int_eq(import(&text, &len, &err), KL_OK);
    long total = kl_alloc_count() - n0;
    ck_assert_int_ge(total, 3); /* the loop below tries each of them */
    free(text);
    /* the record has room for messages already (a caller's second import), so
     * a message costs no allocation and a status must not depend on whether it
     * was kept (a failed allocation reading a table was said to be KL_EIO) */
    kl_errors_add(&err, NULL, 0, 0, NULL, "room");
    for (long n = 0; n < total; n++) {
        kl_errors_clear(&err);
        text = NULL;
        kl_alloc_fail_after(n);
        kl_status st = import(&text, &len, &err);
        kl_alloc_fail_after(-1);
        ck_assert_msg(st == KL_ENOMEM, "allocation %ld of %ld failed but status %d", n, total, (int)st);
        ck_assert_uint_eq(len, 0);
        free(text);
    }
    kl_errors_free(&err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("import");
    TCase *tc = tcase_create("import");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, small_feeder_line_for_line);
    tcase_add_test(tc, allocation_failures);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
