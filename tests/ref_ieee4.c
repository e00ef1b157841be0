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

/* "4-wire configuration" phase impedance matrix, quoted by the second source. */
const double complex ref_ieee4_z_4wire[6] = {
    0.4576 + 1.0780 * I, 0.1559 + 0.5017 * I, 0.1535 + 0.3849 * I,
    0.4666 + 1.0482 * I, 0.1580 + 0.4236 * I, 0.4615 + 1.0651 * I,
};
