/* kilter: the feeder as a tree of live sections, breadth-first from the
 * source, for the study's upstream sums (neutral triplens, taps).  Sections
 * are grouped by sending bus in one CSR table so the walk is linear. */
#include "kl_study.h"

void kl_study_tree_free(kl_study_tree *t)
{
    if (!t)
        return;
    kl_free(t->psec);
    kl_free(t->order);
    t->psec = t->order = NULL;
    t->norder = 0;
}

static int live(const kl_feeder *f, const int *sec_live, int k)
{
    return sec_live ? sec_live[k] != 0 : f->sections[k].closed;
}

/* Breadth-first walk; a bus already reached is not entered twice, so a loop
 * in a (checked elsewhere) radial feeder cannot hang the walk. */
static void walk(const kl_feeder *f, const int *first, const int *out,
                 int *queue, kl_study_tree *t)
{
    int head = 0, tail = 0;
    queue[tail++] = f->source.bus;
    while (head < tail) {
        int b = queue[head++];
        for (int e = first[b]; e < first[b + 1]; e++) {
            int k = out[e], to = kl_sec_down(&f->sections[k]);
            if (to == f->source.bus || t->psec[to] >= 0)
                continue;
            t->psec[to] = k;
            t->order[t->norder++] = k;
            queue[tail++] = to;
        }
    }
}

kl_status kl_study_tree_build(const kl_feeder *f, const int *sec_live, kl_study_tree *t)
{
    size_t nb = (size_t)f->nbuses + 1, ns = (size_t)f->nsections + 1;
    int *first = kl_calloc(nb + 1, sizeof *first);
    int *cursor = kl_calloc(nb, sizeof *cursor);
    int *out = kl_calloc(ns, sizeof *out);
    int *queue = kl_calloc(nb, sizeof *queue);
    kl_status st = KL_ENOMEM;
    t->norder = 0;
    t->psec = kl_malloc(nb * sizeof *t->psec);
    t->order = kl_malloc(ns * sizeof *t->order);
    if (!first || !cursor || !out || !queue || !t->psec || !t->order)
        goto done;
    for (int b = 0; b < f->nbuses; b++)
        t->psec[b] = -1;
    for (int k = 0; k < f->nsections; k++)
        if (live(f, sec_live, k))
            first[kl_sec_up(&f->sections[k]) + 1]++;
    for (int b = 0; b < f->nbuses; b++)
        first[b + 1] += first[b];
    for (int k = 0; k < f->nsections; k++) {
        int b = kl_sec_up(&f->sections[k]);
        if (live(f, sec_live, k))
            out[first[b] + cursor[b]++] = k;
    }
    if (f->source.bus >= 0 && f->source.bus < f->nbuses)
        walk(f, first, out, queue, t);
    st = KL_OK;
done:
    kl_free(first);
    kl_free(cursor);
    kl_free(out);
    kl_free(queue);
    if (st != KL_OK)
        kl_study_tree_free(t);
    return st;
}
