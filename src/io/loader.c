/* kilter: reading a feeder file (kl_feeder_load).
 *
 * The top-level mapping is walked event by event; each list item is read into
 * a small reusable node tree and handed to its element reader.  After the last
 * event, references by name are resolved, the topology is walked from the
 * source, and derived fields are filled.  Every problem goes into the caller's
 * error record; the feeder is returned only when there was none. */
#include <errno.h>
#include <stddef.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include "kilter/units.h"
#include "kl_io.h"

enum { TK_VERSION, TK_NAME, TK_DESC, TK_UNITS, TK_RHO, TK_RADIAL, TK_SOURCE, TK_CONDUCTORS, TK_CABLES,
       TK_LAYOUTS, TK_CONSTRUCTIONS, TK_BUSES, TK_SECTIONS, TK_TRANSFORMERS, TK_REGULATORS, TK_LOADS,
       TK_CAPACITORS, TK_LOADWARN, TK_COORDS, TK_COUNT };
static const char *const top_keys[] = {"kilter-feeder", "name", "description", "units", "earth_resistivity",
                                       "radial", "source", "conductors", "cables", "layouts", "constructions",
                                       "buses", "sections", "transformers", "regulators", "loads",
                                       "capacitors", "loading_warning", "coordinates", NULL};
typedef void (*element_reader)(kl_loader *, int);
static const element_reader list_readers[TK_COUNT] = {
    [TK_CONDUCTORS] = kl_ld_conductor, [TK_CABLES] = kl_ld_cable, [TK_LAYOUTS] = kl_ld_layout,
    [TK_CONSTRUCTIONS] = kl_ld_construction, [TK_BUSES] = kl_ld_bus, [TK_SECTIONS] = kl_ld_section,
    [TK_TRANSFORMERS] = kl_ld_transformer, [TK_REGULATORS] = kl_ld_regulator, [TK_LOADS] = kl_ld_load,
    [TK_CAPACITORS] = kl_ld_capacitor};
static const char *const unit_systems[] = {"us", "si", NULL};

static void top_scalar(kl_loader *L, int k, int node)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    const char *t;
    int i, v;
    fl.map = node;
    fl.keys = top_keys;
    for (i = 0; i < KL_FIELDS_MAX; i++)
        fl.val[i] = -1;
    fl.val[k] = node;
    kl_ld_label(L, "", NULL, -1);
    switch (k) {
    case TK_VERSION:
        if (kl_ld_int(L, &fl, k, &v, 0, 0) == 0 && v != KL_FEEDER_FORMAT_VERSION)
            kl_ld_error(L, node, "this kilter reads feeder format version %d, the file says %d",
                        KL_FEEDER_FORMAT_VERSION, v);
        break;
    case TK_NAME:
    case TK_DESC:
        if ((t = kl_ld_str(L, &fl, k, k == TK_DESC ? KL_F_TEXT : 0))) {
            t = kl_ld_strdup(L, t);
            if (k == TK_NAME)
                f->name = t;
            else
                f->description = t;
        }
        break;
    case TK_UNITS:
        f->units = (kl_unit_system)kl_ld_enum(L, &fl, k, unit_systems, 0);
        break;
    case TK_RHO:
        kl_ld_real(L, &fl, k, KL_Q_RESISTIVITY, &f->earth_resistivity_ohm_m, 100, KL_F_POS);
        break;
    case TK_RADIAL:
        f->radial = kl_ld_bool(L, &fl, k, 1);
        break;
    case TK_SOURCE:
        kl_ld_source(L, node);
        break;
    case TK_COORDS:
        kl_ld_coordinates(L, node);
        break;
    case TK_LOADWARN:
        if (kl_ld_real(L, &fl, k, KL_Q_SHARE, &f->loading_warning, 0, KL_F_POS) == 0 && f->loading_warning > 1)
            kl_ld_error(L, node, "'loading_warning' is a level below the rating, above 0 and at most 100 %%; "
                        "over 100 %% is reported as an overload already");
        break;
    }
}

static int list_items(kl_loader *L, int k)
{
    for (;;) {
        kl_yev e = kl_yreader_peek(L->r);
        int n;
        if (e == KL_YEV_SEQ_END) {
            kl_yreader_consume(L->r);
            return 0;
        }
        kl_yreader_reset(L->r);
        n = kl_yreader_tree(L->r);
        if (n < 0)
            return -1;
        list_readers[k](L, n);
        if (L->nomem)
            return -1;
    }
}

static int find_top_key(kl_loader *L, int key)
{
    const char *t = kl_ynode_text(L->r, key);
    int k, s;
    for (k = 0; top_keys[k]; k++)
        if (strcmp(t, top_keys[k]) == 0)
            return k;
    kl_ld_label(L, "", NULL, -1);
    s = kl_ld_suggest(t, top_keys, TK_COUNT);
    if (s >= 0)
        kl_ld_error(L, key, "unknown top-level key '%s': did you mean '%s'?", t, top_keys[s]);
    else
        kl_ld_error(L, key, "unknown top-level key '%s' (see feeders/README.md for the keys of a feeder file)", t);
    return -1;
}

/* One key of the top-level mapping and its value. */
static int top_entry(kl_loader *L, int *seen, int first)
{
    int key, k, line, col, n;
    kl_yreader_reset(L->r);
    key = kl_yreader_tree(L->r);
    if (key < 0)
        return -1;
    if (kl_ynode_at(L->r, key)->kind != KL_YSCALAR) {
        kl_ld_error(L, key, "expected a key name at the top level");
        return kl_yreader_skip(L->r);
    }
    k = find_top_key(L, key);
    if (first && k != TK_VERSION)
        kl_ld_error(L, key, "a feeder file begins with 'kilter-feeder: %d' (the format version)",
                    KL_FEEDER_FORMAT_VERSION);
    if (k < 0)
        return kl_yreader_skip(L->r);
    if (seen[k]++)
        kl_ld_error(L, key, "top-level key '%s' given twice: merge the two", top_keys[k]);
    if (list_readers[k] && kl_yreader_peek(L->r) == KL_YEV_SEQ_START) {
        kl_yreader_consume(L->r);
        return list_items(L, k);
    }
    kl_yreader_mark(L->r, &line, &col);
    if (list_readers[k]) {
        if (kl_yreader_peek(L->r) == KL_YEV_SCALAR && kl_yreader_skip(L->r) == 0)
            return 0; /* `loads:` left empty: an empty list */
        kl_ld_error_at(L, line, col, "'%s' expects a list of elements, each starting with '- '", top_keys[k]);
        return kl_yreader_skip(L->r);
    }
    kl_yreader_reset(L->r);
    n = kl_yreader_tree(L->r);
    if (n < 0)
        return -1;
    top_scalar(L, k, n);
    return 0;
}

static int expect(kl_loader *L, kl_yev want, const char *what)
{
    int line, col;
    kl_yev e = kl_yreader_peek(L->r);
    if (e == want) {
        kl_yreader_consume(L->r);
        return 0;
    }
    if (e != KL_YEV_ERROR) {
        kl_yreader_mark(L->r, &line, &col);
        kl_ld_error_at(L, line, col, "%s", what);
    }
    return -1;
}

static void top_required(kl_loader *L, const int *seen)
{
    kl_ld_label(L, "", NULL, -1);
    if (!seen[TK_VERSION])
        kl_ld_error_at(L, 1, 1, "missing 'kilter-feeder: %d' (the format version) at the top of the file",
                       KL_FEEDER_FORMAT_VERSION);
    if (!seen[TK_SOURCE])
        kl_ld_error_at(L, 1, 1, "missing 'source:' (the bus the feeder is supplied at, and its voltage)");
    if (!seen[TK_SECTIONS])
        kl_ld_error_at(L, 1, 1, "missing 'sections:' (the lines and devices between buses)");
}

static void read_stream(kl_loader *L)
{
    int seen[TK_COUNT] = {0}, first = 1;
    if (kl_yreader_peek(L->r) == KL_YEV_STREAM_END) {
        kl_ld_error_at(L, 1, 1, "the file is empty: a feeder file begins with 'kilter-feeder: %d'",
                       KL_FEEDER_FORMAT_VERSION);
        return;
    }
    if (expect(L, KL_YEV_DOC_START, "expected a YAML document") < 0 ||
        expect(L, KL_YEV_MAP_START, "the top level of a feeder file is a mapping of keys "
                                    "('kilter-feeder: 1', 'name: ...', ...)") < 0)
        return;
    while (kl_yreader_peek(L->r) != KL_YEV_MAP_END) {
        if (kl_yreader_peek(L->r) == KL_YEV_ERROR || top_entry(L, seen, first) < 0 || L->nomem)
            return;
        first = 0;
    }
    kl_yreader_consume(L->r);
    kl_ld_label(L, "", NULL, -1);
    if (expect(L, KL_YEV_DOC_END, "expected the end of the document") < 0)
        return;
    if (kl_yreader_peek(L->r) == KL_YEV_DOC_START)
        expect(L, KL_YEV_STREAM_END, "a feeder file holds one YAML document: remove the second '---'");
    top_required(L, seen);
    kl_ld_coordinates_check(L);
}

/* Each table names the elements of one array of the feeder, through the
 * elements' first member (names.c). */
#define NAME_FIRST(T) _Static_assert(offsetof(T, name) == 0, #T ": name must be the first member")
NAME_FIRST(kl_bus);
NAME_FIRST(kl_conductor);
NAME_FIRST(kl_cable);
NAME_FIRST(kl_layout);
NAME_FIRST(kl_construction);
NAME_FIRST(kl_section);
NAME_FIRST(kl_transformer);
NAME_FIRST(kl_regulator);
NAME_FIRST(kl_load);
NAME_FIRST(kl_capacitor);

static void loader_tables(kl_loader *L)
{
    kl_feeder *f = L->f;
    kl_names_init(&L->h_bus, (void *const *)&f->buses, sizeof *f->buses);
    kl_names_init(&L->h_cond, (void *const *)&f->conductors, sizeof *f->conductors);
    kl_names_init(&L->h_cable, (void *const *)&f->cables, sizeof *f->cables);
    kl_names_init(&L->h_layout, (void *const *)&f->layouts, sizeof *f->layouts);
    kl_names_init(&L->h_cons, (void *const *)&f->constructions, sizeof *f->constructions);
    kl_names_init(&L->h_sec, (void *const *)&f->sections, sizeof *f->sections);
    kl_names_init(&L->h_xf, (void *const *)&f->transformers, sizeof *f->transformers);
    kl_names_init(&L->h_reg, (void *const *)&f->regulators, sizeof *f->regulators);
    kl_names_init(&L->h_load, (void *const *)&f->loads, sizeof *f->loads);
    kl_names_init(&L->h_cap, (void *const *)&f->capacitors, sizeof *f->capacitors);
}

/* What only reading and resolving need, released before the topology walk
 * allocates its own arrays, so that the two are not held at once. */
static void loader_release_tables(kl_loader *L)
{
    kl_names *t[] = {&L->h_bus, &L->h_cond, &L->h_cable, &L->h_layout, &L->h_cons, &L->h_sec,
                     &L->h_xf, &L->h_reg, &L->h_load, &L->h_cap};
    size_t i;
    for (i = 0; i < sizeof t / sizeof t[0]; i++)
        kl_names_free(t[i]);
    kl_free(L->bus_declared);
    kl_free(L->sec_phases_given);
    kl_free(L->pending);
    L->bus_declared = NULL;
    L->sec_phases_given = NULL;
    L->pending = NULL;
    L->npending = L->cap_pending = L->cap_declared = L->cap_secph = 0;
}

static void loader_free(kl_loader *L)
{
    loader_release_tables(L);
    kl_free(L->cons_pos);
    kl_yreader_free(L->r);
}

static kl_feeder *feeder_new(const char *file)
{
    kl_feeder *f = kl_calloc(1, sizeof *f);
    const char *base;
    if (!f)
        return NULL;
    f->arena = kl_arena_new();
    if (!f->arena || !(f->path = kl_arena_strdup(f->arena, file))) {
        kl_feeder_free(f);
        return NULL;
    }
    base = strrchr(f->path, '/');
    f->name = base ? base + 1 : f->path;
    f->earth_resistivity_ohm_m = 100;
    f->radial = 1;
    f->source.bus = -1;
    f->source.freq_hz = 60;
    f->source.v_pu = 1;
    return f;
}

/* Shared by the file and buffer entry points: L->r is set up by the caller. */
static kl_status load(kl_loader *L, kl_feeder **out)
{
    kl_status s = KL_OK;
    read_stream(L);
    if (!L->nomem && !kl_yreader_failed(L->r)) {
        kl_ld_resolve(L);
        loader_release_tables(L);
        if (!L->nomem && L->has_source)
            kl_ld_topology(L);
    }
    if (L->nwarn > KL_WARNINGS_MAX &&
        kl_errors_warn(L->err, L->file, 0, 0, NULL, "%d more warnings not shown",
                       L->nwarn - KL_WARNINGS_MAX) == KL_ENOMEM)
        L->nomem = 1;
    if (L->nomem || kl_yreader_nomem(L->r))
        s = KL_ENOMEM;
    else if (L->nerr || kl_yreader_failed(L->r))
        s = KL_EINPUT;
    if (s != KL_OK) {
        kl_feeder_free(L->f);
        L->f = NULL;
    }
    *out = L->f;
    loader_free(L);
    return s;
}

kl_status kl_feeder_load_buffer(const char *text, size_t len, const char *name,
                                kl_feeder **out, kl_errors *err)
{
    kl_loader L;
    *out = NULL;
    if (!text || !err)
        return KL_EARG;
    memset(&L, 0, sizeof L);
    L.err = err;
    L.f = feeder_new(name ? name : "");
    if (!L.f)
        return KL_ENOMEM;
    L.file = L.f->path;
    loader_tables(&L);
    L.r = kl_yreader_new_buffer(text, len, L.file, err);
    if (!L.r) {
        kl_feeder_free(L.f);
        return KL_ENOMEM;
    }
    return load(&L, out);
}

static kl_status open_checked(const char *path, size_t max_bytes, FILE **fp, kl_errors *err)
{
    struct stat st;
    *fp = fopen(path, "rb");
    if (!*fp) {
        kl_errors_add(err, path, 0, 0, NULL, "cannot open the feeder file: %s", strerror(errno));
        return KL_EIO;
    }
    if (fstat(fileno(*fp), &st) == 0 && S_ISDIR(st.st_mode)) {
        kl_errors_add(err, path, 0, 0, NULL, "is a directory, not a feeder file");
        fclose(*fp);
        return KL_EIO;
    }
    if (fstat(fileno(*fp), &st) == 0 && (unsigned long long)st.st_size > (unsigned long long)max_bytes) {
        kl_errors_add(err, path, 0, 0, NULL, "the file is %lld bytes, over the limit of %zu bytes: "
                      "split the feeder or raise the limit", (long long)st.st_size, max_bytes);
        fclose(*fp);
        return KL_EINPUT;
    }
    return KL_OK;
}

kl_status kl_feeder_load_limit(const char *path, size_t max_bytes, kl_feeder **out, kl_errors *err)
{
    kl_loader L;
    FILE *fp;
    kl_status s;
    *out = NULL;
    if (!path || !err)
        return KL_EARG;
    s = open_checked(path, max_bytes, &fp, err);
    if (s != KL_OK)
        return s;
    memset(&L, 0, sizeof L);
    L.err = err;
    L.f = feeder_new(path);
    L.r = L.f ? kl_yreader_new_file(fp, path, err) : NULL;
    if (!L.r) {
        kl_feeder_free(L.f);
        fclose(fp);
        return KL_ENOMEM;
    }
    L.file = L.f->path;
    loader_tables(&L);
    s = load(&L, out);
    if (ferror(fp) && s == KL_OK) {
        kl_errors_add(err, path, 0, 0, NULL, "read error: %s", strerror(errno));
        kl_feeder_free(*out);
        *out = NULL;
        s = KL_EIO;
    }
    fclose(fp);
    return s;
}

kl_status kl_feeder_load(const char *path, kl_feeder **out, kl_errors *err)
{
    return kl_feeder_load_limit(path, KL_FEEDER_MAX_BYTES, out, err);
}
