/* Phase masks (KL_PH_A | KL_PH_B | KL_PH_C): their letters, count, cyclic
 * rotation (a -> b -> c -> a, what rephasing a tap does to every phase below
 * it), and the phases a transformer bank gives its load-side bus. */
#include "kl_model.h"

const char *kl_phases_str(int mask, char buf[4])
{
    int n = 0;
    if (mask & KL_PH_A)
        buf[n++] = 'a';
    if (mask & KL_PH_B)
        buf[n++] = 'b';
    if (mask & KL_PH_C)
        buf[n++] = 'c';
    if (!n)
        buf[n++] = '-';
    buf[n] = '\0';
    return buf;
}

int kl_phases_count(int mask)
{
    return (mask & 1) + (mask >> 1 & 1) + (mask >> 2 & 1);
}

/* Cyclic relabelling of a phase mask by r steps (a -> b for r = 1; r may be
 * negative). */
int kl_phases_rotate(int mask, int r)
{
    r = ((r % 3) + 3) % 3;
    int out = 0;
    for (int p = 0; p < 3; p++)
        if (mask & (1 << p))
            out |= 1 << ((p + r) % 3);
    return out;
}

int kl_phases_transformer_load(const kl_transformer *t, int src_phases)
{
    if (t->low == KL_WINDING_CENTER_TAP)
        return KL_PH_A | KL_PH_B;
    if (t->high == KL_WINDING_SINGLE && t->low == KL_WINDING_SINGLE) {
        if (src_phases == (KL_PH_A | KL_PH_B))
            return KL_PH_A;
        if (src_phases == (KL_PH_B | KL_PH_C))
            return KL_PH_B;
        if (src_phases == (KL_PH_A | KL_PH_C))
            return KL_PH_C;
        return src_phases;
    }
    if (t->high == KL_WINDING_SINGLE || t->low == KL_WINDING_SINGLE)
        return src_phases;
    return KL_PH_ABC;
}

const char *kl_regulator_unit_name(const kl_regulator *r, int slot)
{
    static const char *const letter[3] = {"a", "b", "c"};
    static const char *const pair[3][3] = {{"", "ab", "ac"}, {"ba", "", "bc"}, {"ca", "cb", ""}};
    int q = r->shared == KL_PH_A ? 0 : r->shared == KL_PH_B ? 1 : r->shared == KL_PH_C ? 2 : -1;
    if (slot < 0 || slot > 2)
        return "";
    if (r->conn != KL_REG_OPEN_DELTA)
        return letter[slot];
    return q >= 0 ? pair[slot][q] : "";
}
