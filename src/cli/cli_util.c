/* kilter program: option handling, atomic output and error printing shared by
 * every command. */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "cli.h"
#include "kilter/output.h"
#include "kilter/table.h"

/* The message goes through the library's error record, which writes any
 * control byte of it (a file name or an argument quoted back) as an escape:
 * nothing printed here can act on the terminal. */
void kl_cli_error(const char *fmt, ...)
{
    char msg[sizeof ((kl_error_item *)0)->message];
    kl_errors e;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    kl_errors_init(&e);
    if (kl_errors_add(&e, NULL, 0, 0, NULL, "%s", msg) == KL_OK && e.count == 1)
        fprintf(stderr, "kilter: %s\n", e.items[0].message);
    else
        fputs("kilter: out of memory while reporting an error\n", stderr);
    kl_errors_free(&e);
}

static void help(const char *cmd, const char *summary, const kl_cli_opt *opts, int nopts)
{
    int i;
    /* import writes a feeder file from tables: it reads no FEEDER and has one format */
    int tables = strcmp(cmd, "import") == 0;
    printf("usage: kilter %s [options]%s\n\n%s\n\n", cmd, tables ? "" : " [FEEDER]", summary);
    if (tables)
        printf("options:\n");
    else {
        printf("FEEDER is a feeder file; without it the demo feeder is used:\n  %s\n\noptions:\n",
               kl_cli_demo_path());
        printf("  %-22s %s\n", "--format table|csv|json", "output format (default table)");
    }
    printf("  %-22s %s\n", "-o, --output FILE", "write the output to FILE (whole, or not at all)");
    for (i = 0; i < nopts; i++) {
        char left[64];
        snprintf(left, sizeof left, "--%s%s%s", opts[i].name, opts[i].has_arg ? " " : "",
                 opts[i].has_arg ? opts[i].metavar : "");
        printf("  %-22s %s\n", left, opts[i].help);
    }
    printf("  %-22s %s\n\n", "-h, --help", "show this help");
    printf("exit codes: 0 success, 2 bad input, 3 did not converge, 4 cannot read/write a file,\n"
           "            5 out of memory, 64 bad command-line usage\n");
}

static int set_format(kl_cli_args *a, const char *v)
{
    static const char *const names[] = {"table", "csv", "json"};
    int i;
    for (i = 0; i < 3; i++)
        if (strcmp(v, names[i]) == 0) {
            a->format = (kl_cli_format)i;
            return -1;
        }
    kl_cli_error("%s: unknown format '%s': expected table, csv or json", a->cmd, v);
    return KL_EXIT_USAGE;
}

/* The value of an option: `--opt=v`, or the next argument. */
static const char *option_value(const char *arg, int argc, char **argv, int *i)
{
    const char *eq = strchr(arg, '=');
    if (eq)
        return eq + 1;
    if (*i + 1 < argc)
        return argv[++*i];
    return NULL;
}

static int own_option(kl_cli_args *a, const char *arg, int argc, char **argv, int *i,
                      const kl_cli_opt *opts, int nopts)
{
    size_t len = strcspn(arg + 2, "=");
    int k;
    for (k = 0; k < nopts && k < KL_CLI_MAX_OPTS; k++) {
        if (strlen(opts[k].name) != len || strncmp(opts[k].name, arg + 2, len) != 0)
            continue;
        if (!opts[k].has_arg) {
            a->val[k] = "";
            return -1;
        }
        a->val[k] = option_value(arg, argc, argv, i);
        if (a->val[k])
            return -1;
        kl_cli_error("%s: option --%s needs a value (%s)", a->cmd, opts[k].name, opts[k].metavar);
        return KL_EXIT_USAGE;
    }
    kl_cli_error("%s: unknown option '%s' (try 'kilter %s --help')", a->cmd, arg, a->cmd);
    return KL_EXIT_USAGE;
}

/* The spelling of kilter 0.1, `--carson full|approx`, read as `--earth-return
 * complete|modified` with a note on standard error; it goes in kilter 0.2
 * (docs/command-line.md says so).  Only commands that take --earth-return. */
static int old_carson(kl_cli_args *a, const char *arg, int argc, char **argv, int *i,
                      const kl_cli_opt *opts, int nopts)
{
    const char *v;
    int k;
    for (k = 0; k < nopts && k < KL_CLI_MAX_OPTS; k++)
        if (strcmp(opts[k].name, "earth-return") == 0)
            break;
    if (k == nopts || k == KL_CLI_MAX_OPTS)
        return own_option(a, arg, argc, argv, i, opts, nopts); /* unknown here */
    v = option_value(arg, argc, argv, i);
    if (!v) {
        kl_cli_error("%s: option --carson needs a value (deprecated: use --earth-return "
                     "complete|modified)", a->cmd);
        return KL_EXIT_USAGE;
    }
    if (strcmp(v, "full") == 0)
        a->val[k] = "complete";
    else if (strcmp(v, "approx") == 0)
        a->val[k] = "modified";
    else {
        kl_cli_error("%s: unknown --carson '%s': expected full or approx (deprecated: use "
                     "--earth-return complete|modified)", a->cmd, v);
        return KL_EXIT_USAGE;
    }
    kl_cli_error("%s: --carson %s is deprecated and goes in kilter 0.2: use --earth-return %s",
                 a->cmd, v, a->val[k]);
    return -1;
}

static int one_arg(kl_cli_args *a, int argc, char **argv, int *i, const kl_cli_opt *opts, int nopts)
{
    const char *arg = argv[*i], *v;
    if (strcmp(arg, "--carson") == 0 || strncmp(arg, "--carson=", 9) == 0)
        return old_carson(a, arg, argc, argv, i, opts, nopts);
    if (strcmp(arg, "--format") == 0 || strncmp(arg, "--format=", 9) == 0) {
        v = option_value(arg, argc, argv, i);
        if (!v) {
            kl_cli_error("%s: --format needs a value: table, csv or json", a->cmd);
            return KL_EXIT_USAGE;
        }
        return set_format(a, v);
    }
    if (strcmp(arg, "-o") == 0 || strcmp(arg, "--output") == 0 || strncmp(arg, "--output=", 9) == 0) {
        a->output = option_value(arg, argc, argv, i);
        if (a->output && a->output[0])
            return -1;
        kl_cli_error("%s: %s needs a file name", a->cmd, arg);
        return KL_EXIT_USAGE;
    }
    if (strncmp(arg, "--", 2) == 0 && arg[2])
        return own_option(a, arg, argc, argv, i, opts, nopts);
    if (arg[0] == '-' && arg[1]) {
        kl_cli_error("%s: unknown option '%s' (try 'kilter %s --help')", a->cmd, arg, a->cmd);
        return KL_EXIT_USAGE;
    }
    if (!a->feeder_is_demo) {
        kl_cli_error("%s: more than one feeder file given ('%s' and '%s')", a->cmd, a->feeder, arg);
        return KL_EXIT_USAGE;
    }
    a->feeder = arg;
    a->feeder_is_demo = 0;
    return -1;
}

int kl_cli_parse(kl_cli_args *a, int argc, char **argv, const char *summary,
                 const kl_cli_opt *opts, int nopts)
{
    int i, rc;
    memset(a, 0, sizeof *a);
    a->cmd = argv[0];
    a->feeder = kl_cli_demo_path();
    a->feeder_is_demo = 1;
    for (i = 1; i < argc; i++) {
        if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
            help(a->cmd, summary, opts, nopts);
            return KL_EXIT_OK;
        }
        if (strcmp(argv[i], "--") == 0 && i + 1 < argc) {
            a->feeder = argv[++i];
            a->feeder_is_demo = 0;
            continue;
        }
        rc = one_arg(a, argc, argv, &i, opts, nopts);
        if (rc >= 0)
            return rc;
    }
    return -1;
}

/* Output is streamed, not built in memory: a million-bus table is tens of
 * megabytes (hundreds as JSON), which would count against the memory the
 * load flow itself is allowed.  Every file a command names goes into one
 * output set (kilter/output.h, src/base/output.c), put in place when the
 * command is done: whole or not at all, every file or none.  The program runs
 * one command, so the set is the program's (the library keeps none). */
static kl_output *outputs;
static int outputs_failed; /* a file was abandoned or not written whole */

static int outputs_ready(void)
{
    kl_errors e;
    kl_errors_init(&e);
    if (!outputs && kl_output_create(&outputs, &e) != KL_OK) {
        kl_cli_error("out of memory");
        kl_errors_free(&e);
        return KL_EXIT_NOMEM;
    }
    kl_errors_free(&e);
    return 0;
}

void kl_cli_input(const char *path)
{
    kl_errors e;
    if (!path || outputs_ready())
        return;
    kl_errors_init(&e);
    kl_output_input(outputs, path, &e);
    kl_errors_free(&e);
}

int kl_cli_out_open(kl_cli_out *o, const char *path)
{
    kl_errors e;
    int rc;
    o->path = path;
    o->f = NULL;
    if (!path) {
        o->f = stdout;
        return 0;
    }
    if ((rc = outputs_ready()))
        return rc;
    kl_errors_init(&e);
    kl_status st = kl_output_add(outputs, path, &o->f, &e);
    kl_cli_print_errors(&e);
    kl_errors_free(&e);
    if (st) {
        outputs_failed = 1;
        return st == KL_EINPUT ? KL_EXIT_IO : kl_cli_exit_code(st); /* a file it will not write */
    }
    return 0;
}

void kl_cli_out_abandon(kl_cli_out *o)
{
    if (o->f && o->path)
        outputs_failed = 1;
    else if (o->f)
        fflush(o->f);
    o->f = NULL;
}

int kl_cli_out_close(kl_cli_out *o)
{
    FILE *f = o->f;
    o->f = NULL;
    if (!f)
        return KL_EXIT_IO;
    if (fflush(f) != 0 || ferror(f)) {
        if (o->path) {
            kl_cli_error("%s: cannot write: %s; no output file of this command was changed", o->path,
                         strerror(errno));
            outputs_failed = 1;
        } else {
            kl_cli_error("cannot write to standard output: %s", strerror(errno));
        }
        return KL_EXIT_IO;
    }
    return 0;
}

int kl_cli_outputs_finish(int rc)
{
    if (fflush(stdout) != 0 || ferror(stdout)) {
        kl_cli_error("cannot write to standard output: %s", strerror(errno));
        if (!rc)
            rc = KL_EXIT_IO;
    }
    if (outputs && !rc && !outputs_failed) {
        kl_errors e;
        kl_errors_init(&e);
        kl_status st = kl_output_commit(outputs, &e);
        kl_cli_print_errors(&e);
        kl_errors_free(&e);
        if (st)
            rc = kl_cli_exit_code(st);
    }
    if (!rc && outputs_failed)
        rc = KL_EXIT_IO;
    kl_output_free(outputs); /* drops whatever was not committed */
    outputs = NULL;
    return rc;
}

void kl_cli_print_errors(const kl_errors *e)
{
    char line[1400];
    int i;
    for (i = 0; i < e->count; i++) {
        kl_error_format(&e->items[i], line, sizeof line);
        fprintf(stderr, "kilter: %s\n", line);
    }
    if (e->dropped)
        fprintf(stderr, "kilter: ... and %d more problems not shown\n", e->dropped);
}

int kl_cli_exit_code(kl_status s)
{
    switch (s) {
    case KL_OK: return KL_EXIT_OK;
    case KL_ENOCONV: return KL_EXIT_NOCONV;
    case KL_EIO: return KL_EXIT_IO;
    case KL_ENOMEM: return KL_EXIT_NOMEM;
    default: return KL_EXIT_INPUT;
    }
}

/* Buses on Earth (kilter/geo.h): their coordinates must convert, and each
 * line must be at least about as long as the distance between its buses (a
 * warning, the command goes on).  A feeder in plot units has nothing to check. */
static kl_status geo_check(const kl_feeder *f)
{
    if (f->coordinates.system == KL_COORD_PLOT)
        return KL_OK;
    size_t nb = (size_t)f->nbuses + 1, ns = (size_t)f->nsections + 1;
    double *lon = malloc(nb * sizeof *lon), *lat = malloc(nb * sizeof *lat);
    double *dist = malloc(ns * sizeof *dist);
    kl_errors e;
    kl_errors_init(&e);
    kl_status st = lon && lat && dist ? KL_OK : KL_ENOMEM;
    /* a local plane needs no conversion for its distances */
    if (!st && f->coordinates.system != KL_COORD_LOCAL)
        st = kl_geo_lonlat(f, lon, lat, &e);
    kl_cli_print_errors(&e);
    if (st == KL_ENOMEM && e.count == 0)
        kl_cli_error("%s: out of memory converting the bus coordinates", f->path);
    if (!st) {
        kl_errors_clear(&e);
        int local = f->coordinates.system == KL_COORD_LOCAL;
        kl_geo_section_distances(f, local ? NULL : lon, local ? NULL : lat, dist);
        kl_geo_check_lengths(f, dist, &e); /* warnings: printed, the command goes on */
        kl_cli_print_errors(&e);
    }
    kl_errors_free(&e);
    free(lon);
    free(lat);
    free(dist);
    return st;
}

int kl_cli_load(const kl_cli_args *a, kl_feeder **f)
{
    kl_errors e;
    kl_status s;
    kl_cli_input(a->feeder);
    kl_errors_init(&e);
    s = kl_feeder_load(a->feeder, f, &e);
    kl_cli_print_errors(&e);
    char note[768];
    if (s == KL_OK && kl_deenergized_note(*f, note, sizeof note) > 0)
        fprintf(stderr, "kilter: note: %s\n", note); /* the one note, every command and format */
    if (s == KL_ENOMEM && e.count == 0)
        kl_cli_error("%s: out of memory while reading the feeder", a->feeder);
    if (s == KL_OK) {
        /* ratings off by more than a tap range: a warning, the solve goes on
         * (printed as the loader's warnings are, "file:line:col: warning: ...") */
        kl_errors_clear(&e);
        kl_feeder_ratings_check(*f, KL_RATING_WARN_TOL, &e);
        for (int i = 0; i < e.count; i++)
            e.items[i].warning = 1;
        kl_cli_print_errors(&e);
        s = geo_check(*f);
        if (s != KL_OK) {
            kl_feeder_free(*f);
            *f = NULL;
        }
    }
    kl_errors_free(&e);
    return kl_cli_exit_code(s);
}

/* The escapes are the library's (kilter/table.h), so the bespoke parts of an
 * output and its tables quote alike. */
void kl_cli_json_str(FILE *f, const char *s)
{
    kl_table_json_str(f, s ? s : "");
}

void kl_cli_csv_str(FILE *f, const char *s)
{
    kl_table_csv_str(f, s);
}

int kl_cli_carson_form(const char *cmd, const char *value, kl_carson_form *form)
{
    if (!value || strcmp(value, "complete") == 0)
        *form = KL_CARSON_FULL;
    else if (strcmp(value, "modified") == 0)
        *form = KL_CARSON_APPROX;
    else {
        kl_cli_error("%s: unknown --earth-return '%s': expected complete (Carson's full series) "
                     "or modified (its first terms)", cmd, value);
        return KL_EXIT_USAGE;
    }
    return 0;
}

const char *kl_cli_carson_name(kl_carson_form form)
{
    return form == KL_CARSON_FULL ? "complete" : "modified";
}

void kl_cli_json_num(FILE *f, double x)
{
    kl_table_json_num(f, x);
}

int kl_cli_workbook(const char *path, const kl_table_sheet *sheets, int n)
{
    kl_cli_out out;
    kl_errors e;
    int rc = kl_cli_out_open(&out, path);
    if (rc)
        return rc;
    kl_errors_init(&e);
    kl_status st = kl_table_xlsx(out.f, sheets, n, &e);
    kl_cli_print_errors(&e);
    kl_errors_free(&e);
    if (st != KL_OK) {
        kl_cli_out_abandon(&out); /* not written whole: no output file of the command changes */
        return kl_cli_exit_code(st);
    }
    return kl_cli_out_close(&out);
}

int kl_cli_geojson(const char *path, const kl_feeder *f, const kl_geojson_props *buses,
                   const kl_geojson_props *sections, kl_geojson_extra section_extra,
                   kl_geojson_extra bus_extra, const void *extra_ctx, const char *caution)
{
    size_t nb = (size_t)f->nbuses + 1;
    double *lon = malloc(nb * sizeof *lon), *lat = malloc(nb * sizeof *lat);
    kl_cli_out out;
    kl_errors e;
    int rc = 0;
    kl_errors_init(&e);
    kl_status st = lon && lat ? kl_geo_lonlat(f, lon, lat, &e) : KL_ENOMEM;
    if (!st && !(rc = kl_cli_out_open(&out, path))) {
        kl_geojson_input in = { f, lon, lat, *buses, *sections, section_extra, bus_extra, extra_ctx,
                                caution };
        st = kl_geojson_write(out.f, &in, &e);
        if (st)
            kl_cli_out_abandon(&out);
        else
            rc = kl_cli_out_close(&out);
    }
    kl_cli_print_errors(&e);
    if (st == KL_ENOMEM && e.count == 0)
        kl_cli_error("%s: out of memory writing the GeoJSON", path);
    kl_errors_free(&e);
    free(lon);
    free(lat);
    return st ? kl_cli_exit_code(st) : rc;
}
