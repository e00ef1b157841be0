/* kilter lines: phase impedance, sequence impedance, shunt admittance and
 * neutral transformation matrix of every construction a line section uses,
 * in the feeder file's units (ohm/mile and uS/mile, or ohm/km and uS/km).
 *
 * CSV contract (stable; documented in docs/lines.md): header
 *   name,row,col,r_ohm_per_mile,x_ohm_per_mile,b_us_per_mile
 * (the _per_km forms for a feeder in SI units), then one row per element of
 * the phase matrices, row and col phase letters a b c, for the phases the
 * construction has, in the order the constructions appear in the file. */
#include <complex.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/lines.h"
#include "kilter/units.h"
#include "cli.h"

typedef struct {
    double m_per_len;  /* metres in the printed length unit */
    const char *len;   /* "mile" or "km" */
    const char *csv;   /* "mile" or "km", for the CSV column names */
} print_units;

static const char phase_letter[3] = {'a', 'b', 'c'};

static print_units units_of(const kl_feeder *f)
{
    if (f->units == KL_UNITS_SI)
        return (print_units){1000.0, "km", "km"};
    return (print_units){KL_M_PER_MI, "mile", "mile"};
}

/* Which constructions line sections use (1 = used). */
static void mark_used(const kl_feeder *f, unsigned char *used)
{
    for (int i = 0; i < f->nsections; i++) {
        const kl_section *s = &f->sections[i];
        if (s->kind == KL_SEC_LINE && s->construction >= 0 && s->construction < f->nconstructions)
            used[s->construction] = 1;
    }
}

static int has(const kl_construction *c, int p) { return (c->phases >> p) & 1; }
static int three_phase(const kl_construction *c) { return c->phases == KL_PH_ABC; }

/* Label of row r of t_n, following kl_lines_derive's order. */
static void tn_label(const kl_feeder *f, const kl_construction *c, int r, char *buf, size_t n)
{
    int nshield = 0;
    if (c->kind == KL_CONS_CABLE)
        for (int p = 0; p < 3; p++)
            if (has(c, p) && nshield++ == r) {
                int tape = f->cables[c->cable].kind == KL_CABLE_TAPE;
                snprintf(buf, n, "%s %c", tape ? "tape shield" : "concentric neutral", phase_letter[p]);
                return;
            }
    int k = r - nshield;
    const char *pos = "?";
    if (k >= 0 && k < c->nneutrals && c->layout >= 0 && c->neutral_wire[k] >= 0)
        pos = f->layouts[c->layout].wire[c->neutral_wire[k]];
    snprintf(buf, n, "neutral at position %s", pos ? pos : "?");
}

static const char *kind_name(const kl_feeder *f, const kl_construction *c)
{
    if (c->kind == KL_CONS_OVERHEAD)
        return "overhead";
    if (c->kind == KL_CONS_CABLE)
        return f->cables[c->cable].kind == KL_CABLE_TAPE ? "tape-shielded cable"
                                                         : "concentric-neutral cable";
    return "given matrices";
}

static void table_zmatrix(FILE *o, kl_complex z[3][3], const kl_construction *c, int seq, double k)
{
    static const char *seqname[3] = {"0", "1", "2"};
    fprintf(o, "     ");
    for (int j = 0; j < 3; j++)
        if (seq || has(c, j))
            fprintf(o, " %21s", seq ? seqname[j] : (char[]){phase_letter[j], 0});
    fprintf(o, "\n");
    for (int i = 0; i < 3; i++) {
        if (!seq && !has(c, i))
            continue;
        fprintf(o, "  %-3s", seq ? seqname[i] : (char[]){phase_letter[i], 0});
        for (int j = 0; j < 3; j++)
            if (seq || has(c, j))
                fprintf(o, " %10.4f %+9.4fj", creal(z[i][j]) * k, cimag(z[i][j]) * k);
        fprintf(o, "\n");
    }
}

static void print_table_one(FILE *o, const kl_feeder *f, kl_construction *c, print_units u)
{
    char ph[4], lab[96];
    fprintf(o, "construction %s: %s, phases %s\n", c->name, kind_name(f, c), kl_phases_str(c->phases, ph));
    fprintf(o, "  phase impedance, ohm/%s\n", u.len);
    table_zmatrix(o, c->zabc, c, 0, u.m_per_len);
    if (three_phase(c)) {
        kl_complex z012[3][3], z1, z0;
        kl_seqz_from_phase(c->zabc, z012);
        kl_seqz_quoted(c->zabc, &z1, &z0);
        fprintf(o, "  sequence impedance, ohm/%s (0 zero, 1 positive, 2 negative)\n", u.len);
        table_zmatrix(o, z012, c, 1, u.m_per_len);
        fprintf(o, "  Z1 = %.4f %+.4fj, Z0 = %.4f %+.4fj ohm/%s\n", creal(z1) * u.m_per_len,
                cimag(z1) * u.m_per_len, creal(z0) * u.m_per_len, cimag(z0) * u.m_per_len, u.len);
    }
    fprintf(o, "  shunt susceptance, uS/%s\n     ", u.len);
    for (int j = 0; j < 3; j++)
        if (has(c, j))
            fprintf(o, " %10c", phase_letter[j]);
    fprintf(o, "\n");
    for (int i = 0; i < 3; i++) {
        if (!has(c, i))
            continue;
        fprintf(o, "  %-3c", phase_letter[i]);
        for (int j = 0; j < 3; j++)
            if (has(c, j))
                fprintf(o, " %10.4f", cimag(c->yabc[i][j]) * u.m_per_len * 1e6);
        fprintf(o, "\n");
    }
    if (c->ntn == 0) {
        fprintf(o, "  neutral transformation: none (%s)\n\n",
                c->kind == KL_CONS_MATRIX ? "matrices given" : "no neutral conductor");
        return;
    }
    fprintf(o, "  neutral transformation I_n = t_n I_abc\n");
    for (int r = 0; r < c->ntn; r++) {
        tn_label(f, c, r, lab, sizeof lab);
        fprintf(o, "    %-24s", lab);
        for (int j = 0; j < 3; j++)
            if (has(c, j))
                fprintf(o, "  %c: %8.4f %+8.4fj", phase_letter[j], creal(c->tn[r][j]), cimag(c->tn[r][j]));
        fprintf(o, "\n");
    }
    fprintf(o, "\n");
}

static void print_csv(FILE *o, const kl_feeder *f, const unsigned char *used, print_units u)
{
    fprintf(o, "name,row,col,r_ohm_per_%s,x_ohm_per_%s,b_us_per_%s\n", u.csv, u.csv, u.csv);
    for (int n = 0; n < f->nconstructions; n++) {
        const kl_construction *c = &f->constructions[n];
        if (!used[n])
            continue;
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++) {
                if (!has(c, i) || !has(c, j))
                    continue;
                kl_cli_csv_str(o, c->name);
                fprintf(o, ",%c,%c,%.10g,%.10g,%.10g\n", phase_letter[i], phase_letter[j],
                        creal(c->zabc[i][j]) * u.m_per_len, cimag(c->zabc[i][j]) * u.m_per_len,
                        cimag(c->yabc[i][j]) * u.m_per_len * 1e6);
            }
    }
}

/* A 3x3 complex matrix as [[[re, im], ...], ...]. */
static void json_cmatrix(FILE *o, kl_complex z[3][3], double k)
{
    fprintf(o, "[");
    for (int i = 0; i < 3; i++) {
        fprintf(o, "%s[", i ? ", " : "");
        for (int j = 0; j < 3; j++)
            fprintf(o, "%s[%.10g, %.10g]", j ? ", " : "", creal(z[i][j]) * k, cimag(z[i][j]) * k);
        fprintf(o, "]");
    }
    fprintf(o, "]");
}

static void print_json_one(FILE *o, const kl_feeder *f, kl_construction *c, print_units u)
{
    char ph[4], lab[96];
    kl_complex b[3][3];
    fprintf(o, "    {\"name\": ");
    kl_cli_json_str(o, c->name);
    fprintf(o, ", \"kind\": \"%s\", \"phases\": \"%s\",\n     \"z\": ", kind_name(f, c),
            kl_phases_str(c->phases, ph));
    json_cmatrix(o, c->zabc, u.m_per_len);
    if (three_phase(c)) {
        kl_complex z012[3][3], z1, z0;
        kl_seqz_from_phase(c->zabc, z012);
        kl_seqz_quoted(c->zabc, &z1, &z0);
        fprintf(o, ",\n     \"z012\": ");
        json_cmatrix(o, z012, u.m_per_len);
        fprintf(o, ",\n     \"z1\": [%.10g, %.10g], \"z0\": [%.10g, %.10g]", creal(z1) * u.m_per_len,
                cimag(z1) * u.m_per_len, creal(z0) * u.m_per_len, cimag(z0) * u.m_per_len);
    } else {
        fprintf(o, ",\n     \"z012\": null, \"z1\": null, \"z0\": null");
    }
    for (int i = 0; i < 9; i++)
        b[i / 3][i % 3] = cimag(c->yabc[i / 3][i % 3]);
    fprintf(o, ",\n     \"b\": ");
    json_cmatrix(o, b, u.m_per_len * 1e6); /* imaginary parts all zero: [b, 0] pairs */
    fprintf(o, ",\n     \"tn\": [");
    for (int r = 0; r < c->ntn; r++) {
        tn_label(f, c, r, lab, sizeof lab);
        fprintf(o, "%s{\"conductor\": ", r ? ", " : "");
        kl_cli_json_str(o, lab);
        fprintf(o, ", \"row\": [");
        for (int j = 0; j < 3; j++)
            fprintf(o, "%s[%.10g, %.10g]", j ? ", " : "", creal(c->tn[r][j]), cimag(c->tn[r][j]));
        fprintf(o, "]}");
    }
    fprintf(o, "]}");
}

static void print_json(FILE *o, const kl_feeder *f, const unsigned char *used, print_units u,
                       const char *form)
{
    int first = 1;
    fprintf(o, "{\n  \"feeder\": ");
    kl_cli_json_str(o, f->name);
    fprintf(o, ",\n  \"frequency_hz\": %.10g, \"earth_return\": \"%s\",\n", f->source.freq_hz, form);
    fprintf(o, "  \"units\": {\"z\": \"ohm/%s\", \"b\": \"uS/%s\", \"tn\": \"1\"},\n", u.len, u.len);
    fprintf(o, "  \"constructions\": [\n");
    for (int n = 0; n < f->nconstructions; n++) {
        if (!used[n])
            continue;
        fprintf(o, "%s", first ? "" : ",\n");
        print_json_one(o, f, &f->constructions[n], u);
        first = 0;
    }
    fprintf(o, "\n  ]\n}\n");
}

static void print_all(FILE *o, const kl_cli_args *a, kl_feeder *f, const unsigned char *used,
                      kl_carson_form form)
{
    print_units u = units_of(f);
    const char *fname = kl_cli_carson_name(form);
    if (a->format == KL_FMT_CSV) {
        print_csv(o, f, used, u);
    } else if (a->format == KL_FMT_JSON) {
        print_json(o, f, used, u, fname);
    } else {
        fprintf(o, "feeder %s: line constructions at %g Hz, Carson's equations (%s)\n\n", f->name,
                f->source.freq_hz, form == KL_CARSON_FULL ? "complete earth-return series"
                                                          : "modified: first earth-return terms");
        for (int n = 0; n < f->nconstructions; n++)
            if (used[n])
                print_table_one(o, f, &f->constructions[n], u);
    }
}

int kl_cmd_lines(int argc, char **argv)
{
    static const kl_cli_opt opts[] = {KL_CLI_EARTH_RETURN_OPT};
    kl_cli_args a;
    kl_feeder *f = NULL;
    kl_cli_out out;
    kl_carson_form form;
    kl_errors err;
    unsigned char *used = NULL;
    int rc = kl_cli_parse(&a, argc, argv,
                          "Prints, for every construction a line section uses, the phase impedance, "
                          "sequence\nimpedance, shunt susceptance and neutral transformation matrices, "
                          "in the file's units.", opts, 1);
    if (rc >= 0)
        return rc;
    if ((rc = kl_cli_carson_form("lines", a.val[0], &form)) != 0)
        return rc;
    if ((rc = kl_cli_load(&a, &f)) != 0)
        return rc;
    kl_errors_init(&err);
    kl_status st = kl_lines_derive(f, form, &err);
    if (st != KL_OK) {
        kl_cli_print_errors(&err);
        rc = kl_cli_exit_code(st);
        goto done;
    }
    used = calloc((size_t)f->nconstructions + 1, 1);
    if (!used) {
        kl_cli_error("lines: out of memory");
        rc = KL_EXIT_NOMEM;
        goto done;
    }
    mark_used(f, used);
    if ((rc = kl_cli_out_open(&out, a.output)) == 0) {
        print_all(out.f, &a, f, used, form);
        rc = kl_cli_out_close(&out);
    }
done:
    free(used);
    kl_errors_free(&err);
    kl_feeder_free(f);
    return rc;
}
