/* IEEE PES 13-node test feeder: the published tables (source in ref_ieee13.h;
 * each table checked against /work/shared/reference/ieee-13-node.md). */
#include "ref_ieee13.h"

#include <string.h>

const int ref_ieee13_tri[6][2] = {{0, 0}, {0, 1}, {0, 2}, {1, 1}, {1, 2}, {2, 2}};

/* Data sheet, "Line Configurations": impedance and susceptance matrices. */
const ref_ieee13_config ref_ieee13_configs[REF_IEEE13_NCONFIGS] = {
    {"601", 7, {0.3465 + 1.0179 * I, 0.1560 + 0.5017 * I, 0.1580 + 0.4236 * I, 0.3375 + 1.0478 * I,
                0.1535 + 0.3849 * I, 0.3414 + 1.0348 * I},
     {6.2998, -1.9958, -1.2595, 5.9597, -0.7417, 5.6386}},
    {"602", 7, {0.7526 + 1.1814 * I, 0.1580 + 0.4236 * I, 0.1560 + 0.5017 * I, 0.7475 + 1.1983 * I,
                0.1535 + 0.3849 * I, 0.7436 + 1.2112 * I},
     {5.6990, -1.0817, -1.6905, 5.1795, -0.6588, 5.4246}},
    {"603", 6, {0, 0, 0, 1.3294 + 1.3471 * I, 0.2066 + 0.4591 * I, 1.3238 + 1.3569 * I},
     {0, 0, 0, 4.7097, -0.8999, 4.6658}},
    {"604", 5, {1.3238 + 1.3569 * I, 0, 0.2066 + 0.4591 * I, 0, 0, 1.3294 + 1.3471 * I},
     {4.6658, 0, -0.8999, 0, 0, 4.7097}},
    {"605", 4, {0, 0, 0, 0, 0, 1.3292 + 1.3475 * I}, {0, 0, 0, 0, 0, 4.5193}},
    {"606", 7, {0.7982 + 0.4463 * I, 0.3192 + 0.0328 * I, 0.2849 - 0.0143 * I, 0.7891 + 0.4041 * I,
                0.3192 + 0.0328 * I, 0.7982 + 0.4463 * I},
     {96.8897, 0, 0, 96.8897, 0, 96.8897}},
    {"607", 1, {1.3425 + 0.5124 * I, 0, 0, 0, 0, 0}, {88.9912, 0, 0, 0, 0, 0}},
};

const ref_ieee13_config *ref_ieee13_config_find(const char *name)
{
    for (int k = 0; k < REF_IEEE13_NCONFIGS; k++)
        if (strcmp(ref_ieee13_configs[k].name, name) == 0)
            return &ref_ieee13_configs[k];
    return NULL;
}

/* Index of (i, j) in the upper triangle aa ab ac bb bc cc. */
static int tri_index(int i, int j)
{
    static const int at[3][3] = {{0, 1, 2}, {1, 3, 4}, {2, 4, 5}};
    return at[i][j];
}

double complex ref_ieee13_z(const ref_ieee13_config *c, int i, int j)
{
    return c->z[tri_index(i, j)];
}

double ref_ieee13_b(const ref_ieee13_config *c, int i, int j)
{
    return c->b[tri_index(i, j)];
}

/* Data sheet, "Line Segment Data". */
const ref_ieee13_segment ref_ieee13_segments[REF_IEEE13_NSEGMENTS] = {
    {"632", "645", 500, "603"}, {"632", "633", 500, "602"}, {"645", "646", 300, "603"},
    {"rg60", "632", 2000, "601"}, {"684", "652", 800, "607"}, {"632", "671", 2000, "601"},
    {"671", "684", 300, "604"}, {"671", "680", 1000, "601"}, {"684", "611", 300, "605"},
    {"692", "675", 500, "606"},
};

/* Data sheet, "Spot Load Data" and "Distributed Load Data". */
const ref_ieee13_load ref_ieee13_loads[REF_IEEE13_NLOADS] = {
    {"634", 0, REF_IEEE13_PQ, {160, 120, 120}, {110, 90, 90}},
    {"645", 0, REF_IEEE13_PQ, {0, 170, 0}, {0, 125, 0}},
    {"646", 1, REF_IEEE13_Z, {0, 230, 0}, {0, 132, 0}},
    {"652", 0, REF_IEEE13_Z, {128, 0, 0}, {86, 0, 0}},
    {"671", 1, REF_IEEE13_PQ, {385, 385, 385}, {220, 220, 220}},
    {"675", 0, REF_IEEE13_PQ, {485, 68, 290}, {190, 60, 212}},
    {"692", 1, REF_IEEE13_I, {0, 0, 170}, {0, 0, 151}},
    {"611", 0, REF_IEEE13_I, {0, 0, 170}, {0, 0, 80}},
};
const ref_ieee13_load ref_ieee13_distributed = {"632-671", 0, REF_IEEE13_PQ, {17, 66, 117}, {10, 38, 68}};

/* Data sheet, "Shunt Capacitors". */
const double ref_ieee13_cap675_kvar[3] = {200, 200, 200}, ref_ieee13_cap611_kvar[3] = {0, 0, 100};

/* Data sheet, "Transformer Data" and "Regulator Data". */
const struct ref_ieee13_xfm ref_ieee13_xfm1 = {500, 4.16, 0.48, 1.1, 2.0};
const struct ref_ieee13_reg ref_ieee13_reg = {2.0, 20, 700, 122, 3, 9};

/* Power-flow results (2004-06-24). */
const int ref_ieee13_taps[3] = {10, 8, 11};

const ref_ieee13_voltage ref_ieee13_voltages[REF_IEEE13_NVOLTAGES] = {
    {"650", {1.0000, 1.0000, 1.0000}, {0.00, -120.00, 120.00}},
    {"rg60", {1.0625, 1.0500, 1.0687}, {0.00, -120.00, 120.00}},
    {"632", {1.0210, 1.0420, 1.0174}, {-2.49, -121.72, 117.83}},
    {"633", {1.0180, 1.0401, 1.0148}, {-2.56, -121.77, 117.82}},
    {"634", {0.9940, 1.0218, 0.9960}, {-3.23, -122.22, 117.34}},
    {"645", {0, 1.0329, 1.0155}, {0, -121.90, 117.86}},
    {"646", {0, 1.0311, 1.0134}, {0, -121.98, 117.90}},
    {"671", {0.9900, 1.0529, 0.9778}, {-5.30, -122.34, 116.02}},
    {"680", {0.9900, 1.0529, 0.9778}, {-5.30, -122.34, 116.02}},
    {"684", {0.9881, 0, 0.9758}, {-5.32, 0, 115.92}},
    {"611", {0, 0, 0.9738}, {0, 0, 115.78}},
    {"652", {0.9825, 0, 0}, {-5.25, 0, 0}},
    {"692", {0.9900, 1.0529, 0.9777}, {-5.31, -122.34, 116.02}},
    {"675", {0.9835, 1.0553, 0.9758}, {-5.56, -122.52, 116.03}},
};

const ref_ieee13_voltage *ref_ieee13_voltage_find(const char *bus)
{
    for (int k = 0; k < REF_IEEE13_NVOLTAGES; k++)
        if (strcmp(ref_ieee13_voltages[k].bus, bus) == 0)
            return &ref_ieee13_voltages[k];
    return NULL;
}

int ref_ieee13_voltage_three_phase(const ref_ieee13_voltage *v)
{
    return v->mag[0] != 0 && v->mag[1] != 0 && v->mag[2] != 0;
}

const ref_ieee13_current ref_ieee13_currents[REF_IEEE13_NCURRENTS] = {
    {"reg", 0, {593.30, 435.61, 626.92}, {-28.58, -140.91, 93.59}},
    {"rg60-632", 0, {558.40, 414.87, 586.60}, {-28.58, -140.91, 93.59}},
    {"632-633", 0, {81.33, 61.12, 62.70}, {-37.74, -159.09, 80.48}},
    {"632-645", 0, {0, 143.02, 65.21}, {0, -142.66, 57.83}},
    {"645-646", 0, {0, 65.21, 65.21}, {0, -122.17, 57.83}},
    {"632-671", 0, {478.29, 215.12, 475.50}, {-27.03, -134.66, 99.90}},
    {"671-684", 0, {63.07, 0, 71.15}, {-39.12, 0, 121.62}},
    {"671-692", 0, {229.11, 69.61, 178.38}, {-18.18, -55.19, 109.39}},
    {"692-675", 0, {205.33, 69.61, 124.07}, {-5.15, -55.19, 111.79}},
    {"684-611", 0, {0, 0, 71.15}, {0, 0, 121.61}},
    {"684-652", 0, {63.07, 0, 0}, {-39.12, 0, 0}},
    {"xfm-1", 1, {704.83, 529.73, 543.45}, {-37.74, -159.09, 80.47}},
};

const double ref_ieee13_input_kw = 3577.191, ref_ieee13_input_kvar = 1724.772;
const double ref_ieee13_input_kw_phase[3] = {1251.398, 977.332, 1348.461};
const double ref_ieee13_input_kvar_phase[3] = {681.570, 373.418, 669.784};
const double ref_ieee13_loss_kw_phase[3] = {39.107, -4.697, 76.653};

const ref_ieee13_solved_load ref_ieee13_solved_loads[REF_IEEE13_NSOLVED_LOADS] = {
    {"646", 1, 240.66, 138.12}, {"652", 0, 123.56, 83.02},
    {"611", 2, 165.54, 77.90}, {"692", 2, 168.37, 149.55},
};
const double ref_ieee13_q675_kvar[3] = {193.44, 222.75, 190.45}, ref_ieee13_q611_kvar = 94.82;
