/* kilter: neutral current and neutral sizing.
 *
 *   I3_p(load entry)  = h3 |I_p| e^(j 3 phi)           (triplen phasor of one entry)
 *   I3_from(section)  = T I3_to,  I3_to = sum of the loads' and children's I3
 *   I_n3(section)     = | I3_a + I3_b + I3_c |          (sending end)
 *   I_n,rms           = sqrt(|I_n1|^2 + I_n3^2)         (fundamental + triplen)
 *
 * The third harmonic of a load is locked to its voltage: its phase is three
 * times the phase of the voltage the entry is connected across (phi), plus the
 * load's own harmonic angle, taken equal for every load (common practice).
 * phi is the nominal angle: the solved angle rounded to a multiple of
 * 30 degrees, since every connection kilter models shifts by a multiple of
 * 30 degrees.  So third harmonics of wye loads on a, b, c are in phase
 * (3 x 120 deg = 360 deg) and add arithmetically in the neutral: the
 * conservative sum a sizing wants; a balanced delta load's entries (3 phi =
 * 90 deg for all three) cancel in every line and circulate inside it; the
 * legs of a center-tapped service (180 deg apart, 3 x 180 = 540 = 180 deg)
 * cancel in its neutral for equal legs and add in its primary winding.
 *
 * T is the section's current relation at the triplen frequency: identity
 * for lines, switches and regulators (within the regulator's +-10 %); for a
 * transformer bank T = A^T, the ampere-turn balance of its windings with
 * Kirchhoff's current law at its terminals (transformer.c), which holds at
 * every frequency of an ideal transformer (no magnetising branch).  So
 * from the winding equations, for every connection: a grounded-wye or
 * single-phase line-to-neutral primary (center-tapped secondary or not)
 * passes every triplen to its phase and to the primary neutral; a delta
 * winding traps the zero-sequence part (A^T of a delta/wye bank sums to zero
 * over each column) and passes the rest to two phases, never to the
 * neutral; an open-wye primary passes a delta secondary's line triplens to
 * its two phases and its neutral; a single-phase unit across two phases
 * passes them to those phases, not to the neutral.  All of the neutral
 * triplen returns by the metallic neutral (conservative for sizing;
 * docs/study.md).
 *
 * A neutral run is a connected chain (or subtree) of sections of one
 * construction; it is sized for its worst section. */
#include <math.h>
#include <string.h>
#include "kilter/study.h"
#include "kilter/units.h"
#include "kl_study.h"

/* e^(j 3 phi) for the nominal angle phi of voltage v: a quarter turn
 * (0, 1, 2, 3) times 90 degrees. */
static kl_complex triplen_turn(kl_complex v)
{
    static const kl_complex turn[4] = {1.0, I, -1.0, -I};
    double q = carg(v) / (KL_PI / 6.0); /* in steps of 30 degrees */
    long k = lround(q);
    return turn[((k % 4) + 4) % 4]; /* 3 x 30 k degrees = k quarter turns */
}

/* Adds the triplen phasors load L puts on the phases of its bus into i3. */
static void load_triplen(const kl_feeder *f, const kl_study_phases *ph, int L, kl_complex i3[3])
{
    const kl_load *ld = &f->loads[L];
    int bus = ld->bus >= 0 ? ld->bus : kl_sec_down(&f->sections[ld->section]);
    const kl_complex *v = ph->v + 3 * (size_t)bus;
    if (!(ld->third_harmonic > 0))
        return;
    for (int p = 0; p < 3; p++) {
        int q = (p + 1) % 3;
        kl_complex vx = ld->conn == KL_CONN_WYE ? v[p] : v[p] - v[q];
        double vm = cabs(vx);
        if (!(ld->phases & (1 << p)) || !(vm > 0))
            continue;
        kl_complex x = ld->third_harmonic * cabs(ph->s_load[3 * L + p]) / vm * triplen_turn(vx);
        i3[p] += x;
        if (ld->conn != KL_CONN_WYE) /* a delta entry draws from p, returns by q */
            i3[q] -= x;
    }
}

/* Source-side triplen currents of section k from its load-side ones (the
 * transformer's ampere-turn balance; identity otherwise): see the top. */
static void pass_up(const kl_feeder *f, const kl_study_phases *ph, int k, const kl_complex in[3],
                    kl_complex out[3])
{
    const kl_section *sec = &f->sections[k];
    kl_complex A[9], B[9], Yg[9], At[9];
    int load_phases;
    double base;
    char why[8];
    memcpy(out, in, 3 * sizeof in[0]);
    if (sec->kind != KL_SEC_TRANSFORMER)
        return;
    out[0] = out[1] = out[2] = 0;
    if (sec->device < 0 || sec->device >= f->ntransformers)
        return;
    const kl_transformer *t = &f->transformers[sec->device];
    if (kl_transformer_matrices(t, sec->phases, kl_transformer_step_up(t, ph->v_base_ln[sec->from]),
                                A, B, Yg, &load_phases, &base, why, sizeof why))
        return; /* the load flow refused it already */
    kl_cm3_transpose(A, At);
    kl_cm3_vec(At, in, out);
}

/* Sums triplens from the leaves up: children follow parents in the tree.
 * at_bus: [3 * (nbuses + 1)] workspace, zero on entry. */
static void triplen_sum(const kl_feeder *f, const kl_study_phases *ph,
                        const kl_feeder_tree *t, kl_complex *at_bus, kl_study *s)
{
    for (int L = 0; L < f->nloads; L++) {
        const kl_load *ld = &f->loads[L];
        int bus = ld->bus >= 0 ? ld->bus : kl_sec_down(&f->sections[ld->section]);
        load_triplen(f, ph, L, at_bus + 3 * (size_t)bus);
    }
    for (int k = 0; k < f->nsections; k++) {
        s->i_n3[k] = 0;
        s->i3[3 * k] = s->i3[3 * k + 1] = s->i3[3 * k + 2] = 0;
    }
    for (int n = t->nlive - 1; n >= 1; n--) {
        int k = t->sec[n], from = t->order[t->up[n]];
        kl_complex *i3 = s->i3 + 3 * (size_t)k;
        pass_up(f, ph, k, at_bus + 3 * (size_t)t->order[n], i3);
        s->i_n3[k] = cabs(i3[0] + i3[1] + i3[2]);
        for (int p = 0; p < 3; p++)
            at_bus[3 * (size_t)from + (size_t)p] += i3[p];
    }
}

static void combine(const kl_feeder *f, const kl_study_options *opt, kl_study *s)
{
    for (int k = 0; k < f->nsections; k++) {
        const kl_section *sec = &f->sections[k];
        double amp = 0;
        s->i_n_rms[k] = NAN;
        s->neutral_ratio[k] = NAN;
        s->neutral_flag[k] = -1;
        if (isnan(creal(s->i_n1[k])))
            continue;
        s->i_n_rms[k] = hypot(cabs(s->i_n1[k]), s->i_n3[k]);
        if (sec->kind == KL_SEC_LINE)
            amp = f->constructions[sec->construction].neutral_ampacity_a;
        s->neutral_flag[k] = kl_limits_share(s->i_n_rms[k], amp,
                                             opt->limits.neutral_share,
                                             &s->neutral_ratio[k]);
    }
}

/* Run ids: a section joins the run of the section feeding it when both have
 * a neutral and share the construction. */
static int assign_runs(const kl_feeder *f, const kl_feeder_tree *t, kl_study *s)
{
    int nruns = 0;
    for (int k = 0; k < f->nsections; k++)
        s->run[k] = -1;
    for (int n = 1; n < t->nlive; n++) {
        int k = t->sec[n], up = t->sec[t->up[n]];
        if (isnan(s->i_n_rms[k]))
            continue;
        if (up >= 0 && s->run[up] >= 0
            && f->sections[up].kind == KL_SEC_LINE
            && f->sections[up].construction == f->sections[k].construction)
            s->run[k] = s->run[up];
        else
            s->run[k] = nruns++;
    }
    return nruns;
}

/* Smallest conductor of the library (by ampacity) carrying `need`. */
static int smallest_carrying(const kl_feeder *f, double need)
{
    int best = -1;
    for (int c = 0; c < f->nconductors; c++) {
        double a = f->conductors[c].ampacity_a;
        if (a >= need && a > 0 && (best < 0 || a < f->conductors[best].ampacity_a))
            best = c;
    }
    return best;
}

static kl_status runs_alloc(kl_study *s, int nruns)
{
    size_t n = (size_t)(nruns > 0 ? nruns : 1);
    s->nruns = nruns;
    s->run_construction = kl_calloc(n, sizeof(int));
    s->run_first = kl_calloc(n, sizeof(int));
    s->run_sections = kl_calloc(n, sizeof(int));
    s->run_worst = kl_calloc(n, sizeof(int));
    s->run_current = kl_calloc(n, sizeof(double));
    s->run_required = kl_calloc(n, sizeof(double));
    s->run_installed = kl_calloc(n, sizeof(double));
    s->run_conductor = kl_calloc(n, sizeof(int));
    if (!s->run_construction || !s->run_first || !s->run_sections || !s->run_worst
        || !s->run_current || !s->run_required || !s->run_installed || !s->run_conductor)
        return KL_ENOMEM;
    for (int r = 0; r < nruns; r++)
        s->run_first[r] = s->run_worst[r] = -1;
    return KL_OK;
}

static void runs_fill(const kl_feeder *f, const kl_feeder_tree *t,
                      const kl_study_options *opt, kl_study *s)
{
    for (int n = 1; n < t->nlive; n++) {
        int k = t->sec[n], r = s->run[k];
        if (r < 0)
            continue;
        if (s->run_first[r] < 0) {
            s->run_first[r] = k;
            s->run_construction[r] = f->sections[k].construction;
        }
        s->run_sections[r]++;
        if (s->run_worst[r] < 0 || s->i_n_rms[k] > s->run_current[r]) {
            s->run_worst[r] = k;
            s->run_current[r] = s->i_n_rms[k];
        }
    }
    for (int r = 0; r < s->nruns; r++) {
        double amp = f->constructions[s->run_construction[r]].neutral_ampacity_a;
        s->run_required[r] = (1.0 + opt->sizing_margin) * s->run_current[r];
        s->run_installed[r] = amp > 0 ? amp : NAN;
        s->run_conductor[r] = smallest_carrying(f, s->run_required[r]);
    }
}

kl_status kl_neutral_size(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_options *opt, kl_study *s, kl_errors *err)
{
    const kl_feeder_tree *t;
    kl_feeder_tree *own;
    kl_status st = kl_feeder_tree_of(f, &t, &own, NULL);
    if (st == KL_ENOMEM)
        kl_errors_add(err, NULL, 0, 0, "study", "out of memory sizing the neutrals");
    else
        st = kl_neutral_size_on(f, ph, t, opt, s, err);
    kl_feeder_tree_free(own);
    return st;
}

kl_status kl_neutral_size_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_feeder_tree *t, const kl_study_options *opt, kl_study *s,
                             kl_errors *err)
{
    kl_complex *at_bus = kl_calloc(3 * ((size_t)f->nbuses + 1), sizeof *at_bus);
    kl_status st = KL_ENOMEM;
    if (!at_bus)
        goto done;
    triplen_sum(f, ph, t, at_bus, s);
    combine(f, opt, s);
    st = runs_alloc(s, assign_runs(f, t, s));
    if (st == KL_OK)
        runs_fill(f, t, opt, s);
done:
    if (st == KL_ENOMEM)
        kl_errors_add(err, NULL, 0, 0, "study", "out of memory sizing the neutrals");
    kl_free(at_bus);
    return st;
}
