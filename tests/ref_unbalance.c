/* The voltage-unbalance worked examples and curve points (sources in
 * ref_unbalance.h; checked against /work/shared/reference/unbalance.md). */
#include "ref_unbalance.h"

const ref_unbalance_example ref_unbalance_ieee1159 = {{230, 232, 225}, 1.7, 0.05};

const ref_unbalance_example ref_unbalance_mg1[REF_UNBALANCE_NMG1] = {
    {{462, 463, 455}, 1.1, 0.05},
    {{480, 476, 472}, 0.84, 0.005},
    {{203, 210, 212}, 2.5, 0.1},
};

const double ref_unbalance_derate_pct[REF_UNBALANCE_NDERATE] = {0, 0.5, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0, 4.5, 5.0};
const double ref_unbalance_derate_factor[REF_UNBALANCE_NDERATE] = {1.00, 1.00, 0.97, 0.95, 0.93,
                                                                  0.89, 0.85, 0.82, 0.78, 0.76};
