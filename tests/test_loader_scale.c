/* Loader at scale: the name table (names.c) against the C library's qsort and
 * bsearch over the same names, and a generated feeder of many buses whose bus
 * numbering, references and tree are checked against the generator.
 *
 * The rules checked are those of the format specification (feeders/README.md:
 * elements may be written in any order; a bus exists once a section or a
 * `buses:` entry names it) and of feeder.h (bus ids in order of first mention,
 * the feeder tree's section that feeds a bus, `reversed` for sections written load
 * side first).  Independent references: libc's bsearch for look-ups, and the
 * generator's own record of what it wrote. */
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/feeder.h"
#include "kl_io.h"

/* Check writes a message per ck_assert (its fork mode's bookkeeping), too
 * slow for a check per name: loops test with this and fail with the same
 * message. */
#define CHECK(cond)                                                 \
    do {                                                            \
        if (!(cond))                                                \
            ck_abort_msg("%s:%d: failed: %s", __FILE__, __LINE__, #cond); \
    } while (0)

#define CHECK_EQ(a, b) CHECK((a) == (b))

typedef struct {
    const char *name; /* first member, as in every element struct */
    int pad[3];
} elem;

static int cmp_str(const void *a, const void *b)
{
    return strcmp(*(const char *const *)a, *(const char *const *)b);
}

/* Names of mixed shape: short and long, shared prefixes and suffixes, names
 * that are prefixes of others ("n12" and "n123"). */
static void make_name(char *buf, size_t n, int i)
{
    switch (i % 4) {
    case 0: snprintf(buf, n, "n%d", i / 4); break;
    case 1: snprintf(buf, n, "bus-%07d-east-lateral", i); break;
    case 2: snprintf(buf, n, "%d", i * 7919); break;
    default: snprintf(buf, n, "X%dy", i); break;
    }
}

START_TEST(names_at_scale)
{
    enum { N = 200000 };
    elem *e = malloc(N * sizeof *e);
    char *text = malloc((size_t)N * 32);
    const char **sorted = malloc(N * sizeof *sorted);
    kl_names t;
    char probe[64];
    int i, found = 0;
    unsigned s;
    ck_assert(e && text && sorted);
    kl_names_init(&t, (void *const *)&e, sizeof *e);
    for (i = 0; i < N; i++) {
        make_name(text + (size_t)i * 32, 32, i);
        e[i].name = sorted[i] = text + (size_t)i * 32;
        CHECK_EQ(kl_names_find(&t, e[i].name, strlen(e[i].name)), -1);
        CHECK_EQ(kl_names_add(&t, e[i].name, i), KL_OK);
    }
    qsort(sorted, N, sizeof *sorted, cmp_str);
    for (i = 1; i < N; i++)
        CHECK(strcmp(sorted[i - 1], sorted[i]) != 0);
    /* the table follows the element array when it moves */
    e = realloc(e, 2 * N * sizeof *e);
    ck_assert_ptr_nonnull(e);
    for (i = 0; i < N; i++) {
        size_t len = strlen(e[i].name);
        CHECK_EQ(kl_names_find(&t, e[i].name, len), i);
        /* a longer text whose first len bytes are the name is another name */
        memcpy(probe, e[i].name, len);
        memcpy(probe + len, "zq", 3);
        CHECK_EQ(kl_names_find(&t, probe, len + 2) >= 0,
                         bsearch(&(const char *){probe}, sorted, N, sizeof *sorted, cmp_str) != NULL);
        /* and so is a shorter one */
        probe[len - 1] = '\0';
        if (len > 1)
            CHECK_EQ(kl_names_find(&t, e[i].name, len - 1) >= 0,
                             bsearch(&(const char *){probe}, sorted, N, sizeof *sorted, cmp_str) != NULL);
    }
    CHECK_EQ(t.count, N);
    ck_assert_uint_ge(t.cap, 2u * N); /* at most half full */
    for (s = 0; s < t.cap; s++)
        found += kl_names_slot_name(&t, s) != NULL;
    CHECK_EQ(found, N);
    kl_names_free(&t);
    CHECK_EQ(kl_names_find(&t, "n1", 2), -1);
    free(e);
    free(text);
    free(sorted);
}
END_TEST

/* Names of the same hash.  "nq" and "nqvihvwbf" have the same 32-bit FNV-1a
 * hash, 0x443640c0 (FNV-1a as published by Fowler, Noll and Vo: offset basis
 * 2166136261, prime 16777619; the pair was found by a meet-in-the-middle
 * search over the inverse of the byte step), and names.c hashes a name
 * without a trailing number with FNV-1a.  "b1", "b01" and "b001" share a hash
 * by design (stem "b", number 1).  A look-up must still tell a name from a
 * longer one it begins, and from another of the same hash. */
START_TEST(names_same_hash)
{
    elem e[6] = {{"nqvihvwbf", {0}}, {"nq", {0}}, {"nqvihvwb", {0}},
                 {"b01", {0}}, {"b1", {0}}, {"b001", {0}}};
    elem *p = e;
    kl_names t;
    kl_names_init(&t, (void *const *)&p, sizeof *p);
    ck_assert_int_eq(kl_names_add(&t, e[0].name, 0), KL_OK);
    ck_assert_int_eq(kl_names_find(&t, "nq", 2), -1);
    ck_assert_int_eq(kl_names_find(&t, "nqvihvwbfx", 9), 0); /* len bytes only */
    ck_assert_int_eq(kl_names_add(&t, e[1].name, 1), KL_OK);
    ck_assert_int_eq(kl_names_find(&t, "nq", 2), 1);
    ck_assert_int_eq(kl_names_find(&t, "nqvihvwbf", 9), 0);
    ck_assert_int_eq(kl_names_find(&t, "nqvihvwb", 8), -1);
    ck_assert_int_eq(kl_names_add(&t, e[2].name, 2), KL_OK);
    ck_assert_int_eq(kl_names_find(&t, "nqvihvwb", 8), 2);
    ck_assert_int_eq(kl_names_add(&t, e[3].name, 3), KL_OK);
    ck_assert_int_eq(kl_names_find(&t, "b1", 2), -1);
    ck_assert_int_eq(kl_names_find(&t, "b01", 3), 3);
    ck_assert_int_eq(kl_names_add(&t, e[4].name, 4), KL_OK);
    ck_assert_int_eq(kl_names_find(&t, "b001", 4), -1);
    ck_assert_int_eq(kl_names_add(&t, e[5].name, 5), KL_OK);
    ck_assert_int_eq(kl_names_find(&t, "b1", 2), 4);
    ck_assert_int_eq(kl_names_find(&t, "b01", 3), 3);
    ck_assert_int_eq(kl_names_find(&t, "b001", 4), 5);
    ck_assert_int_eq(kl_names_find(&t, "b0001", 5), -1);
    kl_names_free(&t);
}
END_TEST

/* Numbered names 16k .. 16k + 15 of one stem take 16 neighbouring slots
 * (what makes look-ups of consecutive names hit the cache), and a scan in
 * kl_names_scan_order's order visits every name once. */
START_TEST(names_numbered_runs)
{
    enum { N = 64 };
    elem e[N];
    char text[N][16];
    int order[N], seen[N] = {0}, i, k, n;
    elem *p = e;
    kl_names t;
    unsigned s, first = 0;
    kl_names_init(&t, (void *const *)&p, sizeof *p);
    for (i = 0; i < 16; i++) {
        snprintf(text[i], sizeof text[i], "lat%d", 32 + i);
        e[i].name = text[i];
        ck_assert_int_eq(kl_names_add(&t, e[i].name, i), KL_OK);
    }
    for (s = 0; s < t.cap; s++)
        if (kl_names_slot_name(&t, s) && strcmp(kl_names_slot_name(&t, s), "lat32") == 0)
            first = s;
    for (i = 0; i < 16; i++)
        ck_assert_str_eq(kl_names_slot_name(&t, (first + (unsigned)i) & (t.cap - 1)), text[i]);
    for (; i < N; i++) {
        snprintf(text[i], sizeof text[i], i % 2 ? "x%dq" : "%d", i * 37);
        e[i].name = text[i];
        ck_assert_int_eq(kl_names_add(&t, e[i].name, i), KL_OK);
    }
    n = kl_names_scan_order(&t, order);
    ck_assert_int_eq(n, N);
    for (k = 0; k < n; k++) {
        ck_assert(order[k] >= 0 && order[k] < N);
        ck_assert_int_eq(seen[order[k]]++, 0);
    }
    kl_names_free(&t);
}
END_TEST

/* A look-up that misses leaves where the name goes (kl_name_hint); adding
 * with a hint that no longer holds (the table grew or changed, or the hint is
 * another table's) must fall back to a plain add: every name is then found,
 * as the plain table finds them (names_at_scale). */
START_TEST(names_hints)
{
    enum { N = 5000 };
    elem *e = malloc(N * sizeof *e), *e2 = malloc(N * sizeof *e2);
    char *text = malloc((size_t)N * 32), *text2 = malloc((size_t)N * 32);
    kl_names t, u;
    kl_name_hint h, stale, other;
    int i;
    ck_assert(e && e2 && text && text2);
    kl_names_init(&t, (void *const *)&e, sizeof *e);
    kl_names_init(&u, (void *const *)&e2, sizeof *e2);
    CHECK_EQ(kl_names_find_hint(&t, "x", 1, &stale), -1);
    for (i = 0; i < N; i++) {
        make_name(text + (size_t)i * 32, 32, i);
        snprintf(text2 + (size_t)i * 32, 32, "u%d", (i * 7919) % N);
        e[i].name = text + (size_t)i * 32;
        e2[i].name = text2 + (size_t)i * 32;
        CHECK_EQ(kl_names_find_hint(&t, e[i].name, strlen(e[i].name), &h), -1);
        /* the same name looked up in a table of other names, as full */
        CHECK_EQ(kl_names_find_hint(&u, e[i].name, strlen(e[i].name), &other), -1);
        if (i % 3 == 0) /* another table's hint */
            CHECK_EQ(kl_names_add_hint(&t, e[i].name, i, &other), KL_OK);
        else if (i % 3 == 1) /* the hint of a look-up before several adds */
            CHECK_EQ(kl_names_add_hint(&t, e[i].name, i, &stale), KL_OK);
        else
            CHECK_EQ(kl_names_add_hint(&t, e[i].name, i, &h), KL_OK);
        CHECK_EQ(kl_names_add(&u, e2[i].name, i), KL_OK);
        if (i % 7 == 0)
            stale = h;
    }
    for (i = 0; i < N; i++) {
        CHECK_EQ(kl_names_find(&t, e[i].name, strlen(e[i].name)), i);
        CHECK_EQ(kl_names_find(&u, e2[i].name, strlen(e2[i].name)), i);
    }
    CHECK_EQ(t.count, N);
    kl_names_free(&t);
    kl_names_free(&u);
    free(e);
    free(e2);
    free(text);
    free(text2);
}
END_TEST

/* A random tree of nb buses: bus k (k >= 1) hangs from a random earlier bus
 * parent[k]; bus names are a random permutation of numbers, and sections are
 * written in a random order, some with `to` on the source side. */
typedef struct {
    int nb;
    int *parent, *label, *order, *flip;
    char *text;
    size_t len;
} gen;

static unsigned long long rng = 88172645463325252ull;
static unsigned rnd(unsigned n)
{
    rng ^= rng << 13; /* xorshift64 (Marsaglia, J. Stat. Softw. 8(14), 2003) */
    rng ^= rng >> 7;
    rng ^= rng << 17;
    return (unsigned)(rng % n);
}

static void shuffle(int *a, int n)
{
    for (int i = n - 1; i > 0; i--) {
        int j = (int)rnd((unsigned)i + 1), x = a[i];
        a[i] = a[j];
        a[j] = x;
    }
}

static void gen_feeder(gen *g, int nb)
{
    size_t cap = 256 + (size_t)nb * 96, n;
    int k;
    g->nb = nb;
    g->parent = malloc((size_t)nb * sizeof(int));
    g->label = malloc((size_t)nb * sizeof(int));
    g->order = malloc((size_t)(nb - 1) * sizeof(int));
    g->flip = malloc((size_t)nb * sizeof(int));
    g->text = malloc(cap);
    ck_assert(g->parent && g->label && g->order && g->flip && g->text);
    for (k = 0; k < nb; k++) {
        g->parent[k] = k ? (int)rnd((unsigned)k) : -1;
        g->label[k] = k * 3 + 1;
        g->flip[k] = rnd(3) == 0;
    }
    shuffle(g->label, nb);
    for (k = 0; k < nb - 1; k++)
        g->order[k] = k + 1;
    shuffle(g->order, nb - 1);
    n = (size_t)snprintf(g->text, cap,
                         "kilter-feeder: 1\nname: scale\nsource: {bus: b%d, nominal_voltage: 12.47 kV}\n"
                         "constructions:\n  - {name: k3, impedance: {aa: 0.3 + j0.6 ohm/km, "
                         "bb: 0.3 + j0.6 ohm/km, cc: 0.3 + j0.6 ohm/km}}\nsections:\n", g->label[0]);
    for (k = 0; k < nb - 1; k++) {
        int v = g->order[k], u = g->parent[v];
        int a = g->flip[v] ? v : u, b = g->flip[v] ? u : v;
        n += (size_t)snprintf(g->text + n, cap - n,
                              "  - {name: s%d, from: b%d, to: b%d, length: 10 m, construction: k3}\n",
                              v, g->label[a], g->label[b]);
    }
    g->len = n;
}

static void gen_free(gen *g)
{
    free(g->parent);
    free(g->label);
    free(g->order);
    free(g->flip);
    free(g->text);
}

START_TEST(feeder_at_scale)
{
    enum { NB = 60000 };
    gen g;
    kl_errors err;
    kl_feeder *f = NULL;
    int *id_of = malloc(NB * sizeof(int)), *seen = calloc(NB, sizeof(int));
    int k, next = 0;
    char name[32];
    ck_assert(id_of && seen);
    gen_feeder(&g, NB);
    kl_errors_init(&err);
    CHECK_EQ(kl_feeder_load_buffer(g.text, g.len, "scale.yaml", &f, &err), KL_OK);
    CHECK_EQ(f->nbuses, NB);
    CHECK_EQ(f->nsections, NB - 1);
    /* bus ids in order of first mention: the source bus is named first (in
     * `source:`, resolved at the end, so it is created by the first section
     * that names it), then from, to of each section in file order */
    for (k = 0; k < NB - 1; k++) {
        int v = g.order[k], u = g.parent[v];
        int a = g.flip[v] ? v : u, b = g.flip[v] ? u : v;
        if (!seen[a]) {
            seen[a] = 1;
            id_of[a] = next++;
        }
        if (!seen[b]) {
            seen[b] = 1;
            id_of[b] = next++;
        }
    }
    CHECK_EQ(next, NB);
    for (k = 0; k < NB; k++) {
        snprintf(name, sizeof name, "b%d", g.label[k]);
        CHECK(strcmp(f->buses[id_of[k]].name, name) == 0);
        if (k % 101 == 0) /* a linear search: a sample */
            CHECK_EQ(kl_feeder_find_bus(f, name), id_of[k]);
    }
    CHECK_EQ(f->source.bus, id_of[0]);
    for (k = 0; k < NB - 1; k++) {
        int v = g.order[k];
        const kl_section *s = &f->sections[k];
        snprintf(name, sizeof name, "s%d", v);
        CHECK(strcmp(s->name, name) == 0);
        CHECK_EQ(kl_feeder_tree_psec(f->tree, id_of[v]), k);
        CHECK_EQ(s->reversed, g.flip[v]);
        CHECK_EQ(kl_sec_down(s), id_of[v]);
        CHECK_EQ(kl_sec_up(s), id_of[g.parent[v]]);
        CHECK_EQ(f->buses[id_of[v]].phases, KL_PH_ABC);
        CHECK_EQ(kl_feeder_tree_live(f->tree, id_of[v]), 1);
    }
    CHECK_EQ(kl_feeder_tree_psec(f->tree, id_of[0]), -1);
    kl_feeder_free(f);
    kl_errors_free(&err);
    free(id_of);
    free(seen);
    gen_free(&g);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("loader at scale");
    TCase *tc = tcase_create("scale");
    SRunner *sr;
    int nf;
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, names_same_hash);
    tcase_add_test(tc, names_numbered_runs);
    tcase_add_test(tc, names_hints);
    tcase_add_test(tc, names_at_scale);
    tcase_add_test(tc, feeder_at_scale);
    suite_add_tcase(s, tc);
    sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
