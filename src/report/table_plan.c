/* kilter: the rebalancing plan's tables (kilter/table.h): the steps with the
 * objectives after each (step 0 is the feeder as given), the per-level
 * summaries, and the movable items.  The CSV fields and JSON keys are the
 * contract of docs/rebalance.md. */
#include <math.h>
#include "kl_report.h"
#include "kilter/table.h"

#define ROWS(ctx) ((const kl_plan_rows *)(ctx))

static const char *kind_name(const kl_rephase_item *it)
{
    if (it->kind == KL_ITEM_LOAD)
        return "load";
    return (it->phases & (it->phases - 1)) ? "tap-2ph" : "lateral";
}

/* ---- steps: row r is step r % (nsteps + 1) of level r / (nsteps + 1) (or of
 * the record's one level) */

static int step_rows(const void *ctx)
{
    const kl_plan_rows *w = ROWS(ctx);
    return (w->level < 0 ? w->plan->nlevels : 1) * (w->plan->nsteps + 1);
}

static int step_of(const kl_plan_rows *w, int r)
{
    return r % (w->plan->nsteps + 1);
}

static int level_of(const kl_plan_rows *w, int r)
{
    return w->level >= 0 ? w->level : r / (w->plan->nsteps + 1);
}

/* JSON and HTML: the moves (steps 1..n) once, the levels as sub-rows (JSON)
 * or the first level (HTML); text and CSV: every row. */
static int step_keep(const void *ctx, int r, kl_table_format fmt)
{
    const kl_plan_rows *w = ROWS(ctx);
    if (fmt == KL_TABLE_TEXT || fmt == KL_TABLE_CSV)
        return 1;
    return step_of(w, r) > 0 && (w->level >= 0 || level_of(w, r) == 0);
}

static int step_next_level(const void *ctx, int r, int l)
{
    return l + 1 < ROWS(ctx)->plan->nlevels ? l + 1 : -1;
}

static const kl_plan_step *step_at(const kl_plan_rows *w, int r)
{
    int s = step_of(w, r);
    return s > 0 ? &w->plan->steps[s - 1] : NULL;
}

static const kl_rephase_item *item_at(const kl_plan_rows *w, int r)
{
    const kl_plan_step *st = step_at(w, r);
    if (!st || !w->rp || st->item < 0 || st->item >= w->rp->nitems)
        return NULL;
    return &w->rp->items[st->item];
}

/* The summary a figure is read from: a levels row, or a step's at the row's
 * level (sub-row: that level). */
static const kl_rebalance_summary *summary_of(const kl_plan_rows *w, int r, int sub)
{
    if (w->levels)
        return &w->levels[r];
    int l = sub >= 0 ? sub : level_of(w, r);
    const kl_plan_step *st = step_at(w, r);
    return st ? &st->after[l] : &w->plan->before[l];
}

/* The most loaded section, % of its continuous rating (NAN when none is
 * rated), its name, and the sections over their rating. */
static void loading_max_pct(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_rebalance_summary *s = summary_of(ROWS(ctx), r, j);
    c->num = s->loading_section >= 0 ? 100.0 * s->loading_max : NAN;
}

static void loading_section(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_rebalance_summary *s = summary_of(ROWS(ctx), r, j);
    c->str = s->loading_section >= 0 ? ROWS(ctx)->feeder->sections[s->loading_section].name : NULL;
}

static void overloaded(const void *ctx, int r, int j, kl_cell *c)
{
    c->i = summary_of(ROWS(ctx), r, j)->n_overloaded;
}

static void step_number(const void *ctx, int r, int j, kl_cell *c)
{
    c->i = step_of(ROWS(ctx), r);
}

static void level_scale(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = ROWS(ctx)->plan->level[level_of(ROWS(ctx), r)].scale;
}

static void item_name(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_rephase_item *it = item_at(ROWS(ctx), r);
    c->str = it ? it->name : NULL;
}

static void item_name_text(const void *ctx, int r, int j, kl_cell *c)
{
    item_name(ctx, r, j, c);
    if (!c->str)
        c->str = step_of(ROWS(ctx), r) ? "?" : "(as given)";
}

static void item_kind(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_rephase_item *it = item_at(ROWS(ctx), r);
    c->str = it ? kind_name(it) : "";
}

/* The report's words: a lateral (one- or two-phase tap) or a load. */
static void item_kind_html(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_rephase_item *it = item_at(ROWS(ctx), r);
    c->str = !it ? "?" : it->kind == KL_ITEM_LATERAL ? "lateral" : "load";
}

static void item_kva(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_rephase_item *it = item_at(ROWS(ctx), r);
    c->num = it ? it->kva : NAN;
}

/* Text: blank on the as-given row. */
static void item_kva_text(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_rephase_item *it = item_at(ROWS(ctx), r);
    c->buf[0] = '\0';
    if (it)
        snprintf(c->buf, sizeof c->buf, "%.1f", it->kva);
    c->str = c->buf;
}

static void step_from(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_plan_step *st = step_at(ROWS(ctx), r);
    c->str = st ? kl_phases_str(st->from_phases, c->buf) : "";
}

static void step_to(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_plan_step *st = step_at(ROWS(ctx), r);
    c->str = st ? kl_phases_str(st->to_phases, c->buf) : "";
}

static void step_move_html(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_plan_step *st = step_at(ROWS(ctx), r);
    char a[4], b[4];
    snprintf(c->buf, sizeof c->buf, "%s &rarr; %s", kl_phases_str(st->from_phases, a),
             kl_phases_str(st->to_phases, b));
    c->str = c->buf;
}

static void step_cost(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = step_at(ROWS(ctx), r)->cost;
}

static void step_score(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_plan_step *st = step_at(ROWS(ctx), r);
    c->num = st ? st->score : ROWS(ctx)->plan->score_before;
}

static void step_voltage_ok(const void *ctx, int r, int j, kl_cell *c)
{
    c->i = step_at(ROWS(ctx), r)->voltage_ok != 0;
}

static void step_loading_ok(const void *ctx, int r, int j, kl_cell *c)
{
    const kl_plan_step *st = step_at(ROWS(ctx), r);
    c->i = st ? st->loading_ok != 0 : 1;
}

static void step_voltage_ok_html(const void *ctx, int r, int j, kl_cell *c)
{
    int ok = step_at(ROWS(ctx), r)->voltage_ok;
    c->str = ok ? "yes" : "no";
    c->cls = ok ? "ok" : "bad";
}

static void i_head_a(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->i_head[0];
}

static void i_head_b(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->i_head[1];
}

static void i_head_c(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->i_head[2];
}

static void i_residual(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->i_residual;
}

static void i_residual_at(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->i_residual_at;
}

static void vuf(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->vuf_max;
}

static void vuf_pct(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = 100 * summary_of(ROWS(ctx), r, j)->vuf_max;
}

static void losses_kw(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->losses_w / 1e3;
}

static void max_current(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->obj[KL_OBJ_CURRENT];
}

static void v_min_pu(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->v_min_pu;
}

static void v_max_pu(const void *ctx, int r, int j, kl_cell *c)
{
    c->num = summary_of(ROWS(ctx), r, j)->v_max_pu;
}

/* Text: a step that leaves a service voltage outside the range says so. */
static void step_text_after(FILE *o, const void *ctx, int r)
{
    const kl_plan_step *st = step_at(ROWS(ctx), r);
    if (st && !st->voltage_ok)
        fprintf(o, "      (service voltage outside the range after this step)\n");
}

#define TC (KL_IN_TEXT | KL_IN_CSV)
#define NUM(k, u, h, g, in_, hd, tf, cf) \
    {.key = k, .unit = u, .help = h, .type = KL_CELL_NUM, .get = g, .in = in_, \
     .text_head = hd, .text = tf, .csv = cf}
/* The summary of a load flow as JSON members (the plan's levels, a step's
 * "after"); sub: 1 inside a step, 0 as a row of its own. */
#define SUMMARY_JSON(sb) \
    {.key = "i_head_a", .json_key = "i_head[]", .type = KL_CELL_NUM, .get = i_head_a, \
     .in = KL_IN_JSON, .sub = sb}, \
    {.key = "i_head_b", .json_key = "i_head[]", .type = KL_CELL_NUM, .get = i_head_b, \
     .in = KL_IN_JSON, .sub = sb}, \
    {.key = "i_head_c", .json_key = "i_head[]", .type = KL_CELL_NUM, .get = i_head_c, \
     .in = KL_IN_JSON, .sub = sb}, \
    {.key = "i_residual", .type = KL_CELL_NUM, .get = i_residual, .in = KL_IN_JSON, .sub = sb}, \
    {.key = "i_residual_at", .type = KL_CELL_NUM, .get = i_residual_at, .in = KL_IN_JSON, \
     .sub = sb}, \
    {.key = "vuf", .type = KL_CELL_NUM, .get = vuf, .in = KL_IN_JSON, .sub = sb}, \
    {.key = "losses_kw", .type = KL_CELL_NUM, .get = losses_kw, .in = KL_IN_JSON, .sub = sb}, \
    {.key = "v_min_pu", .type = KL_CELL_NUM, .get = v_min_pu, .in = KL_IN_JSON, .sub = sb}, \
    {.key = "v_max_pu", .type = KL_CELL_NUM, .get = v_max_pu, .in = KL_IN_JSON, .sub = sb}, \
    {.key = "loading_max_pct", .type = KL_CELL_NUM, .get = loading_max_pct, .in = KL_IN_JSON, \
     .sub = sb}, \
    {.key = "most_loaded_section", .type = KL_CELL_STR, .get = loading_section, \
     .in = KL_IN_JSON, .sub = sb}, \
    {.key = "sections_over_rating", .type = KL_CELL_INT, .get = overloaded, .in = KL_IN_JSON, \
     .sub = sb}

static const kl_column step_cols[] = {
    {.key = "step", .help = "move number; 0 is the feeder as given", .type = KL_CELL_INT,
     .get = step_number, .in = TC | KL_IN_JSON | KL_IN_HTML, .text_head = "step", .text = "%4d",
     .html_head = "move"},
    NUM("level_scale", "", "the load level's scale", level_scale, KL_IN_CSV, NULL, NULL, "%g"),
    {.key = "item", .help = "the moved lateral, tap or load", .type = KL_CELL_STR,
     .get = item_name, .in = KL_IN_CSV | KL_IN_JSON},
    {.key = "item", .type = KL_CELL_STR, .get = item_name_text, .in = KL_IN_TEXT | KL_IN_HTML,
     .text_head = "item", .text = "  %-24s", .html_head = "what"},
    {.key = "kind", .help = "lateral, tap-2ph (a two-phase tap) or load", .type = KL_CELL_STR,
     .get = item_kind, .in = TC | KL_IN_JSON, .text_head = "kind", .text = " %-8s"},
    {.key = "kind", .type = KL_CELL_STR, .get = item_kind_html, .in = KL_IN_HTML,
     .html_head = "kind"},
    {.key = "kva", .unit = "kVA", .help = "connected load the item carries", .type = KL_CELL_STR,
     .get = item_kva_text, .in = KL_IN_TEXT, .text_head = "kVA", .text = " %8s"},
    {.key = "kva", .unit = "kVA", .type = KL_CELL_NUM, .get = item_kva, .in = KL_IN_JSON,
     .json = "%.3f"},
    {.key = "from", .help = "phases at the tap before the move", .type = KL_CELL_STR,
     .get = step_from, .in = TC | KL_IN_JSON, .text_head = "from", .text = "  %-4s"},
    {.key = "to", .help = "phases at the tap after the move", .type = KL_CELL_STR,
     .get = step_to, .in = TC | KL_IN_JSON, .text_head = "to", .text = " %-4s"},
    {.key = "phases", .type = KL_CELL_STR, .get = step_move_html, .in = KL_IN_HTML,
     .html_head = "phases", .html = "%s"},
    {.key = "cost", .help = "cost of the move", .type = KL_CELL_NUM, .get = step_cost,
     .in = KL_IN_JSON, .json = "%g"},
    NUM("i_head_a", "A", "head current, phase a", i_head_a, KL_IN_CSV, NULL, NULL, NULL),
    NUM("i_head_b", "A", "head current, phase b", i_head_b, KL_IN_CSV, NULL, NULL, NULL),
    NUM("i_head_c", "A", "head current, phase c", i_head_c, KL_IN_CSV, NULL, NULL, NULL),
    {.key = "i_residual", .unit = "A", .help = "head residual |Ia + Ib + Ic|",
     .type = KL_CELL_NUM, .get = i_residual, .in = KL_IN_CSV | KL_IN_HTML,
     .html_head = "residual after A", .html = KL_NUM_AMP},
    {.key = "i_residual_at", .unit = "A", .help = "residual at the --at section (the head "
     "when none)", .type = KL_CELL_NUM, .get = i_residual_at, .in = TC,
     .text_head = "neutral A", .text = " %9.2f"},
    NUM("vuf", "", "worst VUF over three-phase buses (fraction)", vuf, KL_IN_CSV, NULL, NULL,
        "%.8f"),
    {.key = "vuf_pct", .unit = "%", .help = "worst VUF over three-phase buses",
     .type = KL_CELL_NUM, .get = vuf_pct, .in = KL_IN_TEXT | KL_IN_HTML, .text_head = "VUF %",
     .text = " %8.3f", .html_head = "worst VUF after %", .html = KL_NUM_PCT},
    NUM("losses_kw", "kW", "total real losses", losses_kw, TC, "losses kW", " %10.2f", NULL),
    NUM("max_current", "A", "largest phase current (the current objective)", max_current,
        KL_IN_TEXT, "max I A", " %9.2f", NULL),
    {.key = "v_min_pu", .unit = "pu", .help = "lowest phase voltage", .type = KL_CELL_NUM,
     .get = v_min_pu, .in = TC | KL_IN_HTML, .text_head = "low pu", .text = " %8.4f",
     .csv = "%.8f", .html_head = "lowest V after pu", .html = KL_NUM_PU},
    NUM("v_max_pu", "pu", "highest phase voltage", v_max_pu, KL_IN_CSV, NULL, NULL, "%.8f"),
    NUM("loading_max_pct", "%", "the most loaded section's loading, % of its continuous rating",
        loading_max_pct, TC, "load %", " %7.1f", "%.6f"),
    {.key = "score", .help = "weighted score after the moves so far (1 = as given)",
     .type = KL_CELL_NUM, .get = step_score, .in = TC | KL_IN_JSON, .text_head = "score",
     .text = " %8.4f", .csv = "%.8f", .json = "%.8f"},
    {.key = "voltage_ok", .help = "service voltages inside the range after the move",
     .type = KL_CELL_BOOL, .get = step_voltage_ok, .in = KL_IN_JSON},
    {.key = "voltage_ok", .type = KL_CELL_STR, .get = step_voltage_ok_html, .in = KL_IN_HTML,
     .html_head = "voltages in range"},
    {.key = "loading_ok", .help = "no section overloaded by the moves so far (none over its "
     "continuous rating that was not over it as given, none over it loaded more)",
     .type = KL_CELL_BOOL, .get = step_loading_ok, .in = KL_IN_JSON},
    SUMMARY_JSON(1),
};

const kl_table kl_table_plan_steps = {
    .name = "steps", .help = "the plan: a row per move and load level, objectives after it",
    .col = step_cols, .ncol = (int)(sizeof step_cols / sizeof step_cols[0]), .rows = step_rows,
    .keep = step_keep, .next_sub = step_next_level, .sub_in = KL_IN_JSON, .sub_key = "after",
    .text_after = step_text_after, .json_indent = 1,
};

/* ---- levels: a row per load level of one summary array (before, after) */

static int level_rows(const void *ctx)
{
    return ROWS(ctx)->plan->nlevels;
}

static const kl_column level_cols[] = {SUMMARY_JSON(0)};

const kl_table kl_table_plan_levels = {
    .name = "levels", .help = "the objectives at each load level (JSON)", .col = level_cols,
    .ncol = (int)(sizeof level_cols / sizeof level_cols[0]), .rows = level_rows,
};

/* ---- items: what may move (--items) */

static int item_rows(const void *ctx)
{
    return ROWS(ctx)->rp->nitems;
}

#define ITEM(ctx, i) (&ROWS(ctx)->rp->items[i])

static void items_name(const void *ctx, int i, int j, kl_cell *c)
{
    c->str = ITEM(ctx, i)->name;
}

static void items_kind(const void *ctx, int i, int j, kl_cell *c)
{
    c->str = kind_name(ITEM(ctx, i));
}

static void items_phases(const void *ctx, int i, int j, kl_cell *c)
{
    c->str = kl_phases_str(ITEM(ctx, i)->phases, c->buf);
}

/* Phases the item may be moved onto: its rotations the rules allow. */
static void items_may_go(const void *ctx, int i, int j, kl_cell *c)
{
    const kl_rephase_item *it = ITEM(ctx, i);
    int to = 0;
    for (int r = 1; r < 3; r++)
        if (it->allowed & (1 << r))
            to |= kl_phases_rotate(it->phases, r);
    c->str = kl_phases_str(to, c->buf);
}

static void items_kva(const void *ctx, int i, int j, kl_cell *c)
{
    c->num = ITEM(ctx, i)->kva;
}

static void items_cost(const void *ctx, int i, int j, kl_cell *c)
{
    c->num = ITEM(ctx, i)->cost;
}

static void items_notes(const void *ctx, int i, int j, kl_cell *c)
{
    const kl_rephase_item *it = ITEM(ctx, i);
    snprintf(c->buf, sizeof c->buf, "%s%s", it->pinned ? "pinned " : "",
             it->outer >= 0 ? "inside " : "");
    c->str = c->buf;
}

static void items_outer(const void *ctx, int i, int j, kl_cell *c)
{
    const kl_rephase_item *it = ITEM(ctx, i);
    c->str = it->outer >= 0 ? ROWS(ctx)->rp->items[it->outer].name : "";
}

static const kl_column item_cols[] = {
    {.key = "item", .type = KL_CELL_STR, .get = items_name, .in = KL_IN_TEXT,
     .text_head = "item", .text = "%-24s"},
    {.key = "kind", .type = KL_CELL_STR, .get = items_kind, .in = KL_IN_TEXT,
     .text_head = "kind", .text = " %-8s"},
    {.key = "phases", .type = KL_CELL_STR, .get = items_phases, .in = KL_IN_TEXT,
     .text_head = "phases", .text = " %-6s"},
    {.key = "may_go", .help = "phases the rules let it move onto", .type = KL_CELL_STR,
     .get = items_may_go, .in = KL_IN_TEXT, .text_head = "may go", .text = " %-8s"},
    {.key = "kva", .unit = "kVA", .type = KL_CELL_NUM, .get = items_kva, .in = KL_IN_TEXT,
     .text_head = "kVA", .text = " %8.1f"},
    {.key = "cost", .type = KL_CELL_NUM, .get = items_cost, .in = KL_IN_TEXT,
     .text_head = "cost", .text = " %6g"},
    {.key = "notes", .help = "pinned; inside another item (named)", .type = KL_CELL_STR,
     .get = items_notes, .in = KL_IN_TEXT, .text_head = "notes", .text = " %s"},
    {.key = "outer", .type = KL_CELL_STR, .get = items_outer, .in = KL_IN_TEXT, .text_head = "",
     .text = "%s"},
};

const kl_table kl_table_plan_items = {
    .name = "items", .help = "the movable items", .col = item_cols,
    .ncol = (int)(sizeof item_cols / sizeof item_cols[0]), .rows = item_rows,
};
