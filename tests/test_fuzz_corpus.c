/* Fuzz corpus: every file under tests/corpus/ (truncated, binary, deeply
 * nested, alias bomb, huge and non-finite numbers, empty ..., and every
 * finding of the fuzz targets, scripts/fuzz.sh) and a fixed set of byte
 * mutations of a valid feeder must give KL_OK or a located KL_EINPUT, never a
 * crash, hang or leak (the sanitizer builds check the last).  Each corpus file
 * is also run through the fuzz_pipeline target's chain (tests/fuzz/fuzz_run.c:
 * load, lines, network, flow, study, with its contract checks), so a finding
 * of either target replays here exactly as it was found. */
#include <check.h>
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/feeder.h"
#include "fuzz/fuzz_run.h"

#define CORPUS KILTER_SOURCE_DIR "/tests/corpus"

static void check_one(kl_status s, const kl_feeder *f, const kl_errors *e, const char *what)
{
    int i;
    ck_assert_msg(s == KL_OK || s == KL_EINPUT, "%s: status %d", what, s);
    ck_assert_msg((s == KL_OK) == (f != NULL), "%s: feeder and status disagree", what);
    if (s == KL_EINPUT)
        ck_assert_msg(e->count > 0, "%s: KL_EINPUT without a message", what);
    for (i = 0; i < e->count; i++) {
        ck_assert_msg(e->items[i].line >= 0 && e->items[i].col >= 0, "%s: bad position", what);
        ck_assert_msg(e->items[i].message[0], "%s: empty message", what);
    }
}

/* The whole chain on the file's bytes; fuzz_run_pipeline aborts (the test
 * fails, CK_FORK) on a broken contract, and says which on stderr. */
static void replay_chain(const char *path)
{
    FILE *fp = fopen(path, "rb");
    long size;
    char *buf;
    ck_assert_ptr_nonnull(fp);
    ck_assert_int_eq(fseek(fp, 0, SEEK_END), 0);
    size = ftell(fp);
    ck_assert_int_ge(size, 0);
    rewind(fp);
    buf = malloc((size_t)size + 1);
    ck_assert_ptr_nonnull(buf);
    ck_assert_int_eq((long)fread(buf, 1, (size_t)size, fp), size);
    fclose(fp);
    fuzz_run_pipeline((const uint8_t *)buf, (size_t)size);
    free(buf);
}

START_TEST(corpus_files)
{
    DIR *d = opendir(CORPUS);
    struct dirent *de;
    int n = 0;
    ck_assert_ptr_nonnull(d);
    while ((de = readdir(d))) {
        char path[1024];
        kl_errors e;
        kl_feeder *f = NULL;
        kl_status s;
        if (de->d_name[0] == '.')
            continue;
        snprintf(path, sizeof path, "%s/%s", CORPUS, de->d_name);
        kl_errors_init(&e);
        s = kl_feeder_load(path, &f, &e);
        check_one(s, f, &e, de->d_name);
        kl_feeder_free(f);
        kl_errors_free(&e);
        replay_chain(path);
        n++;
    }
    closedir(d);
    ck_assert_int_ge(n, 20);
}
END_TEST

/* Deterministic mutations (a fixed linear congruential sequence, Numerical
 * Recipes' constants) of a valid feeder: overwrite, delete and insert bytes. */
START_TEST(mutations)
{
    FILE *fp = fopen(KILTER_SOURCE_DIR "/tests/data/good-small.yaml", "rb");
    char *text, *buf;
    long size, k;
    unsigned state = 12345;
    static const char pool[] = "{}[]:,-&*!|>'\"#%@ \n\tabcj0123456789.e+";
    ck_assert_ptr_nonnull(fp);
    fseek(fp, 0, SEEK_END);
    size = ftell(fp);
    rewind(fp);
    text = malloc((size_t)size + 1);
    buf = malloc((size_t)size + 16);
    ck_assert_int_eq((long)fread(text, 1, (size_t)size, fp), size);
    fclose(fp);
    for (k = 0; k < 400; k++) {
        long len = size, pos, j;
        kl_errors e;
        kl_feeder *f = NULL;
        kl_status s;
        char what[64];
        memcpy(buf, text, (size_t)size);
        for (j = 0; j < 3; j++) {
            state = state * 1664525u + 1013904223u;
            pos = (long)((state >> 8) % (unsigned long)len);
            switch ((state >> 4) % 3) {
            case 0: buf[pos] = pool[(state >> 16) % (sizeof pool - 1)]; break;
            case 1: memmove(buf + pos, buf + pos + 1, (size_t)(len - pos - 1)); len--; break;
            default:
                memmove(buf + pos + 1, buf + pos, (size_t)(len - pos));
                buf[pos] = pool[(state >> 16) % (sizeof pool - 1)];
                len++;
            }
        }
        kl_errors_init(&e);
        s = kl_feeder_load_buffer(buf, (size_t)len, "mutant.yaml", &f, &e);
        snprintf(what, sizeof what, "mutation %ld", k);
        check_one(s, f, &e, what);
        kl_feeder_free(f);
        kl_errors_free(&e);
    }
    free(text);
    free(buf);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("fuzz corpus");
    TCase *tc = tcase_create("corpus");
    SRunner *sr;
    int failed;
    tcase_add_test(tc, corpus_files);
    tcase_add_test(tc, mutations);
    tcase_set_timeout(tc, 300);
    suite_add_tcase(s, tc);
    sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
