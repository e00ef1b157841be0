/* kilter: unbalance over time.  A quasi-static series of load flows, one per
 * time step of the load shapes, and the statistics the standards judge
 * unbalance, service voltage and neutral heating on.
 *
 *   shapes       the load shapes read from CSV (a time column, one column per
 *                shape, per unit of a load's power or in kW), time stamps ISO
 *                8601 with their UTC offset, one interval of 1 minute to 1 hour;
 *   plan         which shape drives each load (by load, or feeder-wide);
 *   run          one load flow per step, each started from the previous step's
 *                voltages and regulator taps (the taps re-controlled at every
 *                step), a step that does not converge reported with its time
 *                and cause while the series goes on;
 *   statistics   kept as running values whose memory does not grow with the
 *                number of steps: VUF per three-phase bus with its IEC
 *                61000-4-30 10-minute aggregation and the EN 50160 weekly 95 %
 *                statistic, service voltage against the ANSI C84.1 ranges,
 *                neutral and earth current (maximum, RMS, RMS over a heating
 *                window), energy losses per phase, regulator operations.
 *
 * A full record of chosen quantities is the caller's: kl_series_run calls
 * on_step after every step with the solved flow. */
#ifndef KILTER_SERIES_H
#define KILTER_SERIES_H

#include <stdint.h>
#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/limits.h"
#include "kilter/network.h"

/* ---- timestamp.c: seconds since 1970-01-01T00:00:00Z. */
typedef int64_t kl_time;

/* Parses an ISO 8601 date and time with its UTC offset
 * (2026-07-06T14:10+10:00, 2026-07-06T14:10:30-05:00, 2026-07-06T04:10Z).
 * 0, or -1 with *why saying what was expected. */
int kl_time_parse(const char *s, kl_time *t, int *offset_s, const char **why);

typedef struct {
    int year, month, day, hour, minute, second;
    int weekday; /* 0 Monday .. 6 Sunday (ISO 8601 numbering less one) */
} kl_time_parts;
/* The local civil time of t at the given UTC offset. */
void kl_time_local(kl_time t, int offset_s, kl_time_parts *p);
/* "2026-07-06T14:10+10:00" (seconds shown only when not zero). */
void kl_time_format(kl_time t, int offset_s, char buf[32]);

/* ---- shapes.c: load shapes from CSV.
 *   time,residential,commercial,hall [kW]
 *   2026-07-06T00:00+10:00,0.45,0.30,12.5
 * The first column is `time`; each other column is a shape, per unit of the
 * load's own power, or, with "[kW]" after its name, the load's real power in
 * kW (its power factor kept).  Times strictly increasing at one interval of
 * 60 s to 3600 s (a whole number of seconds); each stamp is the start of its
 * interval, whose value holds over it.  Values finite and not negative. */
#define KL_SHAPES_MIN_INTERVAL_S 60
#define KL_SHAPES_MAX_INTERVAL_S 3600
typedef struct {
    char *file;              /* name as given (owned) */
    int nshapes, nsteps;
    char **name;             /* [nshapes] shape names (owned) */
    unsigned char *absolute; /* [nshapes] 1: values in kW */
    double *value;           /* [nsteps * nshapes] row by row; kW columns held in W */
    kl_time *t;              /* [nsteps] start of each step, UTC */
    int *line;               /* [nsteps] file line of each row */
    int interval_s;
    int offset_s;            /* UTC offset of the first row: local time for the views */
    int header_line;
    int name_col[64];        /* column of each shape name in the header (for messages) */
} kl_shapes;

kl_status kl_shapes_read(const char *path, kl_shapes *out, kl_errors *err);
kl_status kl_shapes_read_buffer(const char *text, size_t len, const char *name, kl_shapes *out,
                                kl_errors *err);
void kl_shapes_free(kl_shapes *s);
int kl_shapes_find(const kl_shapes *s, const char *name); /* column index, -1 absent */

/* ---- series_controls.c: switched capacitor banks (below). */
typedef enum { KL_CAP_FIXED = 0, KL_CAP_VOLTAGE = 1, KL_CAP_VAR = 2, KL_CAP_TIME = 3 } kl_cap_control_kind;
typedef struct {
    kl_cap_control_kind kind;
    double on, off;           /* voltage: V on the 120 V base (on < off); var: var flowing
                                 toward the bank (on > off); time: local seconds of the day */
    double delay_s;           /* the condition must hold this long before the bank switches */
} kl_series_cap_control;

struct kl_series_generators;

/* ---- series_plan.c: which shape (or which meters) drive each load. */
typedef struct {
    const kl_shapes *shapes;  /* not owned; must outlive the plan */
    int nloads;
    int *load_shape;          /* [nloads] shape column, -1: held at the file's power */
    /* interval meter data (series_meters.c); NULL / 0 without */
    int nmetered;             /* loads driven by their meters (their shapes then unused) */
    int *load_meter;          /* [nloads] index among the metered loads, -1 */
    double *meter_w;          /* [nsteps * nmetered] the meters' real power per load, W */
    double *meter_var;        /* [nsteps * nmetered] reactive power, var (meter_has_q) */
    int meter_has_q;          /* 0: the loads keep their power factor */
    kl_series_cap_control *cap_ctl; /* [ncapacitors] switched banks; NULL: every bank fixed */
    const struct kl_series_generators *gens; /* rooftop PV (not owned); NULL: none */
} kl_series_plan;

/* Every load held at its power (no shape). */
kl_status kl_series_plan_init(kl_series_plan *p, const kl_feeder *f, const kl_shapes *s,
                              kl_errors *err);
void kl_series_plan_free(kl_series_plan *p);
/* Every load not yet given a shape gets the shape `name` (feeder-wide).
 * KL_EINPUT when there is no such column. */
kl_status kl_series_plan_default(kl_series_plan *p, const kl_feeder *f, const char *name,
                                 kl_errors *err);
/* An assignment CSV (header `load,shape`; `load` a load name, or the word
 * `feeder` for every load the file does not name).  Unknown loads and shapes,
 * duplicates and a kW shape on a load without real power are located errors;
 * nothing is assigned then. */
kl_status kl_series_plan_read(kl_series_plan *p, const kl_feeder *f, const char *path,
                              kl_errors *err);
kl_status kl_series_plan_read_buffer(kl_series_plan *p, const kl_feeder *f, const char *text,
                                     size_t len, const char *name, kl_errors *err);

/* ---- series_meters.c: interval meter data, mapped to loads.
 *   meter,load,time,kwh[,kvarh]     (or kw[,kvar]: average power)
 * Columns by header name in any order.  Readings on the shapes' steps; those
 * outside the series' period passed over; a step missing within it, a
 * reading off the steps or given twice, a meter serving two loads, an
 * unknown load: located errors, nothing metered then.  A load's power is
 * the sum of its meters', split among its phases as the feeder file splits
 * it (and without a reactive column at the feeder file's power factor). */
kl_status kl_series_meters_read(kl_series_plan *p, const kl_feeder *f, const char *path,
                                kl_errors *err);
kl_status kl_series_meters_read_buffer(kl_series_plan *p, const kl_feeder *f, const char *text,
                                       size_t len, const char *name, kl_errors *err);

/* Capacitor controls from CSV (header `capacitor,control,on,off,delay_s`;
 * control voltage, var or time; on and off in V on the 120 V base, kvar, or
 * local HH:MM; delay in seconds).  Banks not named stay as the feeder file
 * has them.  Located errors; no control kept then. */
kl_status kl_series_controls_read(kl_series_plan *p, const kl_feeder *f, const char *path,
                                  kl_errors *err);
kl_status kl_series_controls_read_buffer(kl_series_plan *p, const kl_feeder *f, const char *text,
                                         size_t len, const char *name, kl_errors *err);
/* 1 when bank c's controller, the bank now on (1) or off (0), wants it on at
 * the solved step starting at t: voltage, the mean of its phases on the 120 V
 * base; var, the reactive power into the section feeding its bus. */
int kl_series_cap_wants(const kl_series_cap_control *x, int on, const kl_feeder *f,
                        const kl_flow_result *res, int c, kl_time t, int offset_s);

/* ---- series_generators.c: single-phase rooftop photovoltaic systems, each
 * appended to the feeder as a wye constant-power load of -P on its phase
 * (so every load-flow result lists it among the loads) with its own shape,
 * per unit of its ac nameplate.
 *   name,bus,phase,kw,power_factor,shape,control
 * power_factor: 1, or below 1 followed by absorbing or injecting; control:
 * constant-pf, or volt-var (the IEEE Std 1547-2018 Category B default curve,
 * kl_series_volt_var, the power factor then unused).  Read after the shapes
 * and before the network is built and the plan made. */
typedef struct kl_series_generators {
    int n;
    char **name;              /* [n] (owned; the appended loads point at them) */
    int *load;                /* [n] the feeder load it was appended as */
    int *shape;               /* [n] shape column */
    double *kva;              /* [n] ac nameplate, W (and VA) */
    unsigned char *volt_var;  /* [n] 1: volt-var control */
} kl_series_generators;

kl_status kl_series_generators_read(kl_series_generators *g, kl_feeder *f, const kl_shapes *sh,
                                    const char *path, kl_errors *err);
kl_status kl_series_generators_read_buffer(kl_series_generators *g, kl_feeder *f,
                                           const kl_shapes *sh, const char *text, size_t len,
                                           const char *name, kl_errors *err);
void kl_series_generators_free(kl_series_generators *g);
/* The generators' shapes into the plan (before the feeder-wide default). */
kl_status kl_series_plan_generators(kl_series_plan *p, const kl_series_generators *g);
/* Reactive power per unit of nameplate, + injecting, at the terminal voltage
 * v_pu on the IEEE Std 1547-2018 Category B default volt-var curve. */
double kl_series_volt_var(double v_pu);

/* ---- series_stats.c: the running statistics. */

/* EN 50160 judges the 10-minute values over each week: at least 95 % of them
 * within the limit.  A week holds at most 1008 ten-minute values (the week
 * starts at the start of the 10-minute interval of the first step). */
#define KL_SERIES_AGG_S 600       /* IEC 61000-4-30 10-minute interval */
#define KL_SERIES_WEEK_S 604800
#define KL_SERIES_WEEK_VALUES 1008
/* 95th percentile by nearest rank: the value at ascending rank ceil(0.95 N);
 * at most N - ceil(0.95 N) + 1 of the largest values are needed (51 of 1008). */
#define KL_SERIES_TOP_KEEP 51

typedef struct kl_series_stats {
    int nbuses, nsections, nregulators, ncapacitors;
    int offset_s;             /* the shapes' UTC offset, for printing times */
    double vuf_limit;         /* the EN 50160 limit the weekly statistic is judged on */
    int heating_window_s;

    /* the run */
    int nsteps, nsolved, nfailed;
    kl_time t_first, t_end;   /* first step's start, last step's end */
    double solved_s;          /* time covered by solved steps, s */
    int nweeks;               /* weeks begun */
    int last_week_partial;    /* 1 when the last week has fewer than 1008 ten-minute values */
    int nfail_kept;           /* failures listed below (the first KL_SERIES_FAIL_KEEP) */
    kl_time *fail_t;          /* [nfail_kept] */
    char (*fail_why)[480];    /* [nfail_kept] cause, as the load flow said it */

    /* per bus: VUF of three-phase buses (NAN elsewhere) */
    double *vuf_max;          /* [nbuses] largest VUF of a step */
    kl_time *vuf_max_t;       /* [nbuses] its step's start */
    double *vuf_mean;         /* [nbuses] time-weighted mean VUF over the solved steps */
    double *vuf_over_s;       /* [2*nbuses] time over limits.vuf_compat, vuf_supply, s */
    double *vuf10_max;        /* [nbuses] largest 10-minute value */
    kl_time *vuf10_max_t;     /* [nbuses] start of its interval */
    double *vuf10_p95;        /* [nbuses] the worst week's 95th percentile of 10-minute values */
    int *vuf10_p95_week;      /* [nbuses] that week (0-based) */
    int *n10, *n10_over;      /* [nbuses] 10-minute values, and those over vuf_limit */
    int *weeks_over;          /* [nbuses] weeks whose 95th percentile is over vuf_limit */

    /* per bus and phase (3*bus + phase), NAN for absent phases */
    double *v_min_pu, *v_max_pu;
    kl_time *v_min_t, *v_max_t;
    double *outside_a_s, *outside_b_s; /* time outside ANSI C84.1 Range A, Range B, s */

    /* per section */
    double *in_max;           /* [nsections] largest neutral current of a step, A (NAN: no neutral) */
    kl_time *in_max_t;
    double *in_rms;           /* [nsections] RMS over the solved steps, A */
    double *in_win_max;       /* [nsections] largest RMS over one heating window, A */
    kl_time *in_win_t;        /* [nsections] start of that window */
    double *ie_max;           /* [nsections] largest earth-return current, A */
    kl_time *ie_max_t;
    double *ie_rms;           /* [nsections] RMS over the solved steps, A */
    double *loss_wh;          /* [3*nsections] energy lost per phase, Wh */

    /* feeder */
    double head_wh[3];        /* energy into the feeder per phase, Wh */
    double head_varh[3];
    double losses_wh[3];      /* losses per phase, Wh */
    int *reg_ops;             /* [3*nregulators] tap steps moved per unit */
    int *cap_switches;        /* [ncapacitors] switching operations (on or off) */
    double *cap_on_s;         /* [ncapacitors] solved time in service, s */
    unsigned char *cap_kind;  /* [ncapacitors] kl_cap_control_kind */

    struct kl_series_run_state *run; /* running sums (series_stats.c), freed with the stats */
} kl_series_stats;

#define KL_SERIES_FAIL_KEEP 200

/* ---- series.c: the run. */
typedef void (*kl_series_step_fn)(void *ctx, int step, kl_time t, const kl_flow_result *res,
                                   int solved);
typedef struct {
    kl_flow_options flow;     /* each step's load flow (load_scale multiplies every shape) */
    kl_limits limits;         /* service ranges; vuf_compat is the EN 50160 limit (2 %) */
    int heating_window_s;     /* the neutral's heating window; default 3600 (one hour) */
    kl_series_step_fn on_step;/* called after every step (NULL: none) */
    void *ctx;
    /* Called before each step's solve, after the shapes, meters and
     * generators have set the loads' powers (f->loads[].s_va): it may set
     * them otherwise (the allocation of a head-measured series, kilter/
     * allocate.h, allocating the rest of the load at the step's reading) and
     * may solve net itself.  A status other than KL_OK stops the series with
     * it.  NULL: none. */
    kl_status (*before_step)(void *ctx, int step, kl_time t, kl_feeder *f, kl_network *net,
                             kl_errors *err);
    void *before_ctx;
} kl_series_options;

void kl_series_options_default(kl_series_options *o);

/* Runs the series: step by step, every load's power set from its shape (the
 * feeder's loads are changed while it runs and given back their powers at
 * the end), one load flow on net, the statistics updated.  A step that does
 * not converge is listed (time, cause) and the next starts afresh.  res is
 * the flow result record (kl_flow_result_alloc) the steps fill.  KL_EINPUT
 * for a plan that does not fit the feeder, KL_ENOMEM; *out owned by the
 * caller (kl_series_stats_free). */
kl_status kl_series_run(kl_feeder *f, kl_network *net, const kl_series_plan *plan,
                        const kl_series_options *o, kl_flow_result *res, kl_series_stats **out,
                        kl_errors *err);
void kl_series_stats_free(kl_series_stats *s);

/* series_stats.c, for the run and for tests: the statistics of one series
 * fed step by step. */
kl_status kl_series_stats_alloc(const kl_feeder *f, const kl_series_options *o, int offset_s,
                                kl_series_stats **out);
/* One step [t, t + dt) solved (res) or not (res NULL, why its cause). */
void kl_series_stats_step(kl_series_stats *s, const kl_feeder *f, kl_time t, int dt,
                          const kl_flow_result *res, const kl_limits *lim, const char *why);
/* Closes the last 10-minute interval, heating window and week. */
void kl_series_stats_finish(kl_series_stats *s);
/* The value at ascending rank ceil(q N) of x[0..n-1] (nearest rank; sorts x). */
double kl_series_nearest_rank(double *x, int n, double q);

#endif
