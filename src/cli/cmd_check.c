/* kilter check: validate a feeder file and summarise what it holds.  The
 * check runs everything the analyses run before they solve (load, line
 * constants, network build), so a file it passes is one they accept. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/lines.h"
#include "kilter/network.h"
#include "kilter/units.h"
#include "cli.h"

typedef struct {
    int kinds[5];           /* sections by kl_section_kind */
    int open_switches;
    double line_m;
    kl_complex s_va[3];     /* connected load per phase (delta split half to each phase of its pair) */
    double cap_var[3];
    int tap1[3];            /* single-phase taps on a, b, c */
    int tap2[3];            /* two-phase taps on ab, bc, ca */
    int dead_loads, dead_caps; /* beyond open switches: left out of the connected totals */
} summary;

static const int pair_a[3] = {0, 1, 2}, pair_b[3] = {1, 2, 0}; /* ab, bc, ca */

static void add_power(kl_complex s_ph[3], kl_connection conn, int mask, const kl_complex *s)
{
    int k;
    for (k = 0; k < 3; k++) {
        if (!(mask >> k & 1))
            continue;
        if (conn == KL_CONN_DELTA) {
            s_ph[pair_a[k]] += s[k] / 2;
            s_ph[pair_b[k]] += s[k] / 2;
        } else {
            s_ph[k] += s[k];
        }
    }
}

/* A tap: a line with fewer phases than the bus it leaves. */
static void count_tap(summary *u, const kl_feeder *f, const kl_section *s)
{
    int up = s->reversed ? s->to : s->from, n = kl_phases_count(s->phases), k;
    if (s->kind != KL_SEC_LINE || up < 0 || n >= kl_phases_count(f->buses[up].phases))
        return;
    if (n == 1)
        u->tap1[s->phases == KL_PH_A ? 0 : s->phases == KL_PH_B ? 1 : 2]++;
    else if (n == 2)
        for (k = 0; k < 3; k++)
            if (s->phases == ((1 << pair_a[k]) | (1 << pair_b[k])))
                u->tap2[k]++;
}

static void summarise(const kl_feeder *f, summary *u)
{
    int i;
    for (i = 0; i < f->nsections; i++) {
        const kl_section *s = &f->sections[i];
        u->kinds[s->kind]++;
        u->open_switches += s->kind == KL_SEC_SWITCH && !s->closed;
        if (s->kind == KL_SEC_LINE)
            u->line_m += s->length_m;
        count_tap(u, f, s);
    }
    for (i = 0; i < f->nloads; i++) /* beyond an open switch: not connected */
        if (!kl_deenergized_load(f, i))
            add_power(u->s_va, f->loads[i].conn, f->loads[i].phases, f->loads[i].s_va);
        else
            u->dead_loads++;
    for (i = 0; i < f->ncapacitors; i++) {
        kl_complex q[3], s[3] = {0, 0, 0};
        if (kl_deenergized_bus(f, f->capacitors[i].bus)) {
            u->dead_caps++;
            continue;
        }
        int k;
        for (k = 0; k < 3; k++)
            q[k] = f->capacitors[i].q_var[k];
        add_power(s, f->capacitors[i].conn, f->capacitors[i].phases, q);
        for (k = 0; k < 3; k++)
            u->cap_var[k] += creal(s[k]);
    }
}

/* What the source bus is held at, and what is behind it (feeders/README.md, "The regulated bus"). */
static void source_line(FILE *o, const kl_source *s)
{
    if (s->has_equivalent)
        fprintf(o, "source bus held   %.3f pu (positive sequence) by the substation tap changer, "
                "behind %.4g %c j%.4g ohm\n", s->v_pu, creal(s->z1_ohm),
                cimag(s->z1_ohm) < 0 ? '-' : '+', fabs(cimag(s->z1_ohm)));
    else
        fprintf(o, "source bus        %.3f pu (positive sequence), an ideal source\n", s->v_pu);
    if (s->has_background)
        fprintf(o, "background        V2/V1 %.2f %% at %.1f deg, stated for the supply\n",
                100 * cabs(s->background), carg(s->background) * KL_DEG_PER_RAD);
}

static void print_table(FILE *o, const kl_feeder *f, const summary *u)
{
    kl_complex t = u->s_va[0] + u->s_va[1] + u->s_va[2];
    int k;
    fprintf(o, "feeder            %s\n", f->name);
    fprintf(o, "file              %s\n", f->path);
    fprintf(o, "nominal voltage   %.4g kV line-to-line at bus %s\n", f->source.kv_ll, f->buses[f->source.bus].name);
    source_line(o, &f->source);
    fprintf(o, "buses             %d\n", f->nbuses);
    fprintf(o, "sections          %d: %d lines, %d switches (%d open), %d transformers, %d regulators\n",
            f->nsections, u->kinds[KL_SEC_LINE], u->kinds[KL_SEC_SWITCH], u->open_switches,
            u->kinds[KL_SEC_TRANSFORMER], u->kinds[KL_SEC_REGULATOR]);
    fprintf(o, "line length       %.3f %s\n", kl_units_long_length(f->units, u->line_m),
            kl_units_long_length_name(f->units));
    fprintf(o, "loads             %d, capacitors %d", f->nloads, f->ncapacitors);
    if (u->dead_loads || u->dead_caps)
        fprintf(o, " (%d loads, %d capacitors de-energized, not counted below)", u->dead_loads,
                u->dead_caps);
    fputc('\n', o);
    fprintf(o, "\nconnected         phase a    phase b    phase c      total\n");
    fprintf(o, "  load kW      %10.1f %10.1f %10.1f %10.1f\n", creal(u->s_va[0]) / 1e3,
            creal(u->s_va[1]) / 1e3, creal(u->s_va[2]) / 1e3, creal(t) / 1e3);
    fprintf(o, "  load kvar    %10.1f %10.1f %10.1f %10.1f\n", cimag(u->s_va[0]) / 1e3,
            cimag(u->s_va[1]) / 1e3, cimag(u->s_va[2]) / 1e3, cimag(t) / 1e3);
    fprintf(o, "  load kVA     ");
    for (k = 0; k < 3; k++)
        fprintf(o, "%10.1f ", cabs(u->s_va[k]) / 1e3);
    fprintf(o, "%10.1f\n", cabs(t) / 1e3);
    fprintf(o, "  capacitor kvar%9.1f %10.1f %10.1f %10.1f\n", u->cap_var[0] / 1e3, u->cap_var[1] / 1e3,
            u->cap_var[2] / 1e3, (u->cap_var[0] + u->cap_var[1] + u->cap_var[2]) / 1e3);
    fprintf(o, "\ntaps              single-phase: a %d, b %d, c %d; two-phase: ab %d, bc %d, ca %d\n",
            u->tap1[0], u->tap1[1], u->tap1[2], u->tap2[0], u->tap2[1], u->tap2[2]);
    fprintf(o, "transformers      %d defined, %d in sections\n", f->ntransformers, u->kinds[KL_SEC_TRANSFORMER]);
    fprintf(o, "regulators        %d defined, %d in sections\n", f->nregulators, u->kinds[KL_SEC_REGULATOR]);
    fprintf(o, "\nnote: a delta load or capacitor counts half on each phase of its pair; a tap is a line\n"
               "with fewer phases than the bus it leaves.\n");
}

static void csv_row(FILE *o, const char *item, const char *phase, double v, const char *unit)
{
    fprintf(o, "%s,%s,%.10g,%s\n", item, phase, v, unit);
}

static void print_csv(FILE *o, const kl_feeder *f, const summary *u)
{
    static const char *const ph[3] = {"a", "b", "c"}, *const pairs[3] = {"ab", "bc", "ca"};
    int k;
    fprintf(o, "item,phase,value,unit\nfeeder,,");
    kl_cli_csv_str(o, f->name);
    fprintf(o, ",\n");
    csv_row(o, "buses", "", f->nbuses, "");
    csv_row(o, "sections", "", f->nsections, "");
    csv_row(o, "lines", "", u->kinds[KL_SEC_LINE], "");
    csv_row(o, "switches", "", u->kinds[KL_SEC_SWITCH], "");
    csv_row(o, "open_switches", "", u->open_switches, "");
    csv_row(o, "transformers", "", u->kinds[KL_SEC_TRANSFORMER], "");
    csv_row(o, "regulators", "", u->kinds[KL_SEC_REGULATOR], "");
    csv_row(o, "line_length", "", kl_units_long_length(f->units, u->line_m), kl_units_long_length_name(f->units));
    for (k = 0; k < 3; k++) {
        csv_row(o, "load_kw", ph[k], creal(u->s_va[k]) / 1e3, "kW");
        csv_row(o, "load_kvar", ph[k], cimag(u->s_va[k]) / 1e3, "kvar");
        csv_row(o, "load_kva", ph[k], cabs(u->s_va[k]) / 1e3, "kVA");
        csv_row(o, "capacitor_kvar", ph[k], u->cap_var[k] / 1e3, "kvar");
        csv_row(o, "single_phase_taps", ph[k], u->tap1[k], "");
    }
    for (k = 0; k < 3; k++)
        csv_row(o, "two_phase_taps", pairs[k], u->tap2[k], "");
}

static void json_triple(FILE *o, const char *key, const double v[3], int last)
{
    fprintf(o, "  \"%s\": {\"a\": %.10g, \"b\": %.10g, \"c\": %.10g}%s\n", key, v[0], v[1], v[2], last ? "" : ",");
}

static void print_json(FILE *o, const kl_feeder *f, const summary *u)
{
    double kw[3], kvar[3], kva[3], cap[3], t1[3];
    int k;
    for (k = 0; k < 3; k++) {
        kw[k] = creal(u->s_va[k]) / 1e3;
        kvar[k] = cimag(u->s_va[k]) / 1e3;
        kva[k] = cabs(u->s_va[k]) / 1e3;
        cap[k] = u->cap_var[k] / 1e3;
        t1[k] = u->tap1[k];
    }
    fprintf(o, "{\n  \"feeder\": ");
    kl_cli_json_str(o, f->name);
    fprintf(o, ",\n  \"buses\": %d,\n  \"sections\": {\"total\": %d, \"lines\": %d, \"switches\": %d, "
               "\"open_switches\": %d, \"transformers\": %d, \"regulators\": %d},\n",
            f->nbuses, f->nsections, u->kinds[KL_SEC_LINE], u->kinds[KL_SEC_SWITCH], u->open_switches,
            u->kinds[KL_SEC_TRANSFORMER], u->kinds[KL_SEC_REGULATOR]);
    fprintf(o, "  \"line_length\": {\"value\": %.10g, \"unit\": \"%s\"},\n",
            kl_units_long_length(f->units, u->line_m), kl_units_long_length_name(f->units));
    json_triple(o, "load_kw", kw, 0);
    json_triple(o, "load_kvar", kvar, 0);
    json_triple(o, "load_kva", kva, 0);
    json_triple(o, "capacitor_kvar", cap, 0);
    json_triple(o, "single_phase_taps", t1, 0);
    fprintf(o, "  \"two_phase_taps\": {\"ab\": %d, \"bc\": %d, \"ca\": %d},\n", u->tap2[0], u->tap2[1], u->tap2[2]);
    fprintf(o, "  \"transformers\": %d,\n  \"regulators\": %d,\n  \"delta_split\": \"half to each phase of the pair\"\n}\n",
            f->ntransformers, f->nregulators);
}

/* What flow, study and rebalance do before they solve: the line constants
 * (Carson's full form, their default) and the network build.  0, or the exit
 * code after printing what they found. */
static int prepare(kl_feeder *f)
{
    kl_network *net = NULL;
    kl_errors e;
    kl_status st;
    kl_errors_init(&e);
    st = kl_lines_derive(f, KL_CARSON_FULL, &e);
    if (!st)
        st = kl_network_build(f, &net, &e);
    kl_cli_print_errors(&e);
    if (st == KL_ENOMEM && e.count == 0)
        kl_cli_error("check: out of memory");
    kl_errors_free(&e);
    kl_network_free(net);
    return st ? kl_cli_exit_code(st) : 0;
}

int kl_cmd_check(int argc, char **argv)
{
    kl_cli_args a;
    kl_feeder *f = NULL;
    kl_cli_out out;
    summary u;
    int rc = kl_cli_parse(&a, argc, argv, "Validates a feeder file (every problem, with file:line:column), "
                          "up to what the analyses\ncheck before they solve (line constants, network build), "
                          "and summarises it:\nbuses, sections, line length, connected load and capacitors "
                          "per phase, taps.", NULL, 0);
    if (rc >= 0)
        return rc;
    rc = kl_cli_load(&a, &f);
    if (rc)
        return rc;
    if ((rc = prepare(f))) {
        kl_feeder_free(f);
        return rc;
    }
    memset(&u, 0, sizeof u);
    summarise(f, &u);
    rc = kl_cli_out_open(&out, a.output);
    if (!rc) {
        if (a.format == KL_FMT_CSV)
            print_csv(out.f, f, &u);
        else if (a.format == KL_FMT_JSON)
            print_json(out.f, f, &u);
        else
            print_table(out.f, f, &u);
        rc = kl_cli_out_close(&out);
    }
    kl_feeder_free(f);
    return rc;
}
