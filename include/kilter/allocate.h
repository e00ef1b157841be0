/* kilter: loads from what a utility measures.  Allocation scales the loads
 * of a feeder so that the load flow's demand at the feeder head matches the
 * demand metered there, phase by phase.
 *
 * Each allocated load entry carries a basis (a weight in VA or W): the
 * nameplate kVA of the transformers serving it (kl_alloc_basis_kva), or the
 * peak demand estimated from its customers' energy (kl_alloc_basis_energy).
 * One complex factor per phase, F_p = f_P + j f_Q, makes the entry's power
 * basis x F_p (a delta entry between phases p and q takes (F_p + F_q) / 2).
 * The factors are found by repeated full load flows, so the head demand
 * includes the losses and the voltage dependence of the loads: the
 * allocation factor method of the trade ("metered feeder maximum demand":
 * W. H. Kersting, "Distribution System Modeling and Analysis", ch. 2, from
 * memory), iterated to the measured head quantity.  Loads without a basis
 * (no connected_kva, fixed_power: true, no customer energy) keep their power.
 *
 * The library function works on one head reading; a series of readings (a
 * SCADA export) is allocated one reading at a time by the caller, each from
 * the feeder as given, so a step of a series equals the same snapshot. */
#ifndef KILTER_ALLOCATE_H
#define KILTER_ALLOCATE_H

#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/network.h"

/* What the head measurement gives per phase. */
typedef enum {
    KL_HEAD_KW_KVAR = 1, /* real and reactive power */
    KL_HEAD_KW_PF = 2,   /* real power and power factor */
    KL_HEAD_AMPS_PF = 3  /* current magnitude and power factor */
} kl_head_form;

/* One head reading: a snapshot, or one time step of a series.  A power
 * factor is positive lagging (the feeder draws vars), negative leading. */
typedef struct {
    kl_head_form form;
    int phases;          /* mask of the phases measured */
    double p_w[3];       /* _KW_KVAR, _KW_PF: real power into the feeder per phase, W */
    double q_var[3];     /* _KW_KVAR: reactive power, var */
    double pf[3];        /* _KW_PF, _AMPS_PF: power factor, -1..1 and not 0 */
    double amps[3];      /* _AMPS_PF: line current magnitude, A */
    char time[40];       /* time stamp of a series row as written; "" for a snapshot */
    const char *file;    /* the measurement file (owned by the series), for messages */
    kl_loc loc[3];       /* where each phase's figures were read (line, column of the row) */
} kl_head_reading;

/* The head readings of a measurement file: one snapshot, or a series. */
typedef struct {
    kl_head_reading *r;  /* [n] in file order */
    int n;
    int series;          /* 1: the file is a time series (time column) */
    char *file;          /* the file's name as given (owned) */
} kl_head_series;

/* Reads a head measurement CSV file (feeders/README.md, "Head measurements"):
 *   a snapshot, one row per phase:   phase,kw,kvar | phase,kw,pf | phase,amps,pf
 *   a series, one row per time step: time,kw_a,kvar_a,kw_b,... (or pf_, amps_)
 * Header names are matched without regard to case or surrounding spaces.
 * Every problem (a missing or duplicated phase, a bad number, an unknown
 * column) goes into err as file:line:col with what was expected; KL_EINPUT
 * and nothing read then.  `out` is emptied first and owned by the caller
 * (kl_head_series_free). */
kl_status kl_head_read(const char *path, kl_head_series *out, kl_errors *err);
kl_status kl_head_read_buffer(const char *text, size_t len, const char *name, kl_head_series *out,
                              kl_errors *err);
void kl_head_series_free(kl_head_series *s);

/* The head power a reading asks for, W + j var per phase, at the head's
 * phase-to-neutral voltage magnitudes v_abs (used by the current form only). */
void kl_head_target(const kl_head_reading *h, const double v_abs[3], kl_complex s[3]);

/* ---- allocation by energy: a customer class turns a customer's billed
 * energy into a peak-demand estimate, by a linear relation
 *     kW = intercept + slope x kWh      (Kersting, "Distribution System
 * Modeling and Analysis", sec. 2.3, "transformer load management", from
 * memory: 0.2 + 0.008 kWh for monthly residential energy)
 * or by a load factor (average over peak demand, IEEE Std 100, common
 * practice): kW = kWh / (hours x load factor).  A transformer's (load's)
 * customers' peaks add up and are divided by the diversity factor of their
 * number (sum of the individual peaks over the peak of the group, common
 * practice), when a table is given. */
typedef struct {
    char name[40];       /* the class as the energy file names it */
    double intercept_w;  /* linear relation: W at zero energy */
    double w_per_kwh;    /* linear relation: W per kWh of the period */
    double load_factor;  /* 0 < LF <= 1; 0 when the class uses the linear relation */
    double hours;        /* hours of a billing period (load factor form); default 730 (a month) */
    kl_loc loc;
} kl_customer_class;

typedef struct {
    kl_customer_class *c; /* [n] */
    int n;
    char *file;           /* owned */
} kl_class_table;

/* Diversity factor by number of customers: rows in increasing order of
 * customers, factors >= 1 and not decreasing; between rows (and from one
 * customer at 1, by the definition, to the first row) interpolated
 * linearly, beyond the last held. */
typedef struct {
    int *customers;       /* [n] */
    double *factor;       /* [n] */
    int n;
    char *file;           /* owned */
} kl_diversity_table;

/* One customer's energy of one billing period. */
typedef struct {
    int load;             /* feeder load id */
    int cls;              /* index into the class table */
    double kwh;           /* >= 0 */
    char customer[40];
    char period[24];
    kl_loc loc;
} kl_customer_energy;

typedef struct {
    kl_customer_energy *r; /* [n] the rows of the period allocated */
    int n;
    char *file;            /* owned */
    char period[24];       /* the period read */
} kl_energy_table;

/* The class table: class,intercept_kw,kw_per_kwh  or  class,load_factor[,hours]
 * (a row gives one form; both forms may be columns of one file). */
kl_status kl_class_read(const char *path, kl_class_table *out, kl_errors *err);
kl_status kl_class_read_buffer(const char *text, size_t len, const char *name, kl_class_table *out,
                               kl_errors *err);
void kl_class_table_free(kl_class_table *t);
/* The diversity table: customers,diversity_factor. */
kl_status kl_diversity_read(const char *path, kl_diversity_table *out, kl_errors *err);
kl_status kl_diversity_read_buffer(const char *text, size_t len, const char *name, kl_diversity_table *out,
                                   kl_errors *err);
void kl_diversity_table_free(kl_diversity_table *t);
/* The diversity factor of n customers (1 without a table). */
double kl_diversity_factor(const kl_diversity_table *t, int n);
/* The customer energy file: customer,load,kwh,period[,class], each load a
 * load of f (its distribution transformer), each class one of `classes`
 * (the column may be left out when the table has one class).  period: the
 * billing period to take (NULL: the file's only one).  Located errors: a load
 * or class that matches none, a negative or non-numeric energy, a customer
 * given twice in a period, a load marked fixed_power. */
kl_status kl_energy_read(const char *path, const kl_feeder *f, const kl_class_table *classes,
                         const char *period, kl_energy_table *out, kl_errors *err);
kl_status kl_energy_read_buffer(const char *text, size_t len, const char *name, const kl_feeder *f,
                                const kl_class_table *classes, const char *period, kl_energy_table *out,
                                kl_errors *err);
void kl_energy_table_free(kl_energy_table *t);

/* The basis from energy: each load's customers' peak-demand estimates (W),
 * summed and divided by the diversity factor of their number (div may be
 * NULL), shared equally by the load's entries.  Loads without customers get
 * none (held at their power); a load with no power of its own and no
 * customer is an error (KL_EINPUT, located at the load).  Returns KL_OK and
 * the number of entries with a basis in *n. */
kl_status kl_alloc_basis_energy(const kl_feeder *f, const kl_energy_table *e, const kl_class_table *c,
                                const kl_diversity_table *div, double *basis, int *n, kl_errors *err);

typedef struct {
    double tol;          /* largest |S_head - S_target| / |S_target| per phase; default 0.001 */
    int max_iter;        /* load flows at most; default 30 */
    kl_flow_options flow;/* options of each load flow (load_scale must be 1) */
} kl_alloc_options;

void kl_alloc_options_default(kl_alloc_options *o);

typedef struct {
    kl_complex factor[3];  /* F_p: power per unit of basis, (W + j var) / VA of connected kVA */
    kl_complex target[3];  /* head power the reading asks for, W + j var */
    kl_complex head[3];    /* head power of the last load flow */
    double mismatch[3];    /* |head - target| / |target|; 0 for phases not measured */
    double basis[3];       /* allocated basis on each phase (delta entries half to each phase) */
    kl_complex held[3];    /* power of the loads held (no basis), as solved, W + j var */
    int phases;            /* phases allocated: measured and with a basis */
    int iterations;        /* load flows run */
    int converged;         /* 1: every measured phase within tol */
} kl_alloc_result;

/* The basis from connected kVA: basis[3 l + k] = load l's nameplate kVA of
 * entry k (VA), 0 for loads with no connected_kva, fixed_power: true, or
 * de-energized.  Returns how many entries have a basis. */
int kl_alloc_basis_kva(const kl_feeder *f, double *basis);

/* Allocates: sets the power of every load entry with a basis to basis x the
 * phase's factor (f->loads[].s_va: the feeder is changed; write it with
 * kl_feeder_write for later studies), solving the load flow of `net` (built
 * from f) each time, until the head matches h within opt->tol.  res is the
 * last load flow's.  basis: [3 * f->nloads], as kl_alloc_basis_* fills it.
 *   KL_EINPUT: a measured phase has no load to allocate, a phase measured as
 *     zero or not at all while loads there have a basis, or the held loads and
 *     losses already exceed a measured phase (its factor would be negative);
 *   KL_ENOCONV: the load flow, or the factors, did not settle in max_iter
 *     (the record says which phase, by how much and the likely cause).
 * out is filled in every case (the factors and mismatch reached). */
kl_status kl_alloc_solve(kl_feeder *f, kl_network *net, const double *basis, const kl_head_reading *h,
                         const kl_alloc_options *opt, kl_flow_result *res, kl_alloc_result *out,
                         kl_errors *err);

#endif
