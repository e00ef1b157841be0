/* IEEE PES 4-node test feeder: the published tables (source in ref_ieee4.h;
 * each checked against /work/shared/reference/ieee-4-node.md). */
#include "ref_ieee4.h"

/* "Step-down balanced", column Gr.Y-Gr.Y.  Node 3 phase a is printed
 * 2247.6 (the only magnitude printed with a decimal; the second source
 * quotes 2247). */
const ref_ieee4_case ref_ieee4_gry_gry_balanced = {
    "ieee-4-node-gry-gry-balanced.yaml", 3, {
        {"2", {7107, 7140, 7121}, {-0.3, -120.3, 119.6}},
        {"3", {2247.6, 2269, 2256}, {-3.7, -123.5, 116.4}},
        {"4", {1918, 2061, 1981}, {-9.1, -128.3, 110.9}},
    }};

/* "Step-down unbalanced", column Gr.Y-Gr.Y. */
const ref_ieee4_case ref_ieee4_gry_gry_unbalanced = {
    "ieee-4-node-gry-gry-unbalanced.yaml", 3, {
        {"2", {7164, 7110, 7082}, {-0.1, -120.2, 119.3}},
        {"3", {2305, 2255, 2203}, {-2.3, -123.6, 114.8}},
        {"4", {2175, 1930, 1833}, {-4.1, -126.8, 102.8}},
    }};

/* "Step-down unbalanced", column Delta-Gr.Y, node 4 (line-to-ground). */
const ref_ieee4_case ref_ieee4_delta_gry_unbalanced = {
    "ieee-4-node-delta-gry-unbalanced.yaml", 1, {
        {"4", {2157, 1936, 1849}, {-34.2, -157.0, 73.4}},
    }};

/* "Step-down balanced", columns Gr.Y-Delta and Y-Delta (I12 only). */
const ref_ieee4_gry_delta ref_ieee4_gry_delta_balanced = {
    "ieee-4-node-gry-delta-balanced.yaml",
    {"2", {7113, 7132, 7123}, {-0.3, -120.3, 119.6}},
    {"4", {3437, 3497, 3388}, {-7.8, -129.3, 110.6}},
    {334.8, 335.4, 337.4}, {-34.5, -154.9, 85.4},
    {335.8, 335.9, 335.9}, {-34.7, -154.6, 85.3},
};

/* "Step-down unbalanced", columns Gr.Y-Delta and Y-Delta (I12 only). */
const ref_ieee4_gry_delta ref_ieee4_gry_delta_unbalanced = {
    "ieee-4-node-gry-delta-unbalanced.yaml",
    {"2", {7113, 7144, 7111}, {-0.2, -120.4, 119.5}},
    {"4", {3425, 3646, 3298}, {-5.8, -130.3, 108.6}},
    {308.5, 314.6, 389.0}, {-41.5, -145.5, 85.9},
    {309.8, 315.5, 387.2}, {-41.7, -145.2, 85.9},
};

/* "4-wire configuration" phase impedance matrix, quoted by the second source. */
const double complex ref_ieee4_z_4wire[6] = {
    0.4576 + 1.0780 * I, 0.1559 + 0.5017 * I, 0.1535 + 0.3849 * I,
    0.4666 + 1.0482 * I, 0.1580 + 0.4236 * I, 0.4615 + 1.0651 * I,
};
