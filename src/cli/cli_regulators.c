/* kilter program: a warning on standard error for each regulator held at a
 * tap limit with its set point not reached, so that every output of flow and
 * study (a bus CSV included, which has no regulator column) carries it. */
#include <stdio.h>
#include <string.h>
#include "cli.h"
#include "kilter/flow.h"

void kl_cli_regulator_warnings(const kl_feeder *f, const kl_flow_result *r)
{
    for (int g = 0; g < f->nregulators; g++) {
        const kl_regulator *rg = &f->regulators[g];
        char units[16] = "";
        int n = 0, dir = 0;
        for (int p = 0; p < 3; p++)
            if (r->reg_limit[3 * g + p]) { /* "abc"; an open delta's units "ab, cb" */
                if (n++ && rg->conn == KL_REG_OPEN_DELTA)
                    strcat(units, ", ");
                strcat(units, kl_regulator_unit_name(rg, p));
                dir = r->reg_limit[3 * g + p];
            }
        if (!n)
            continue;
        fprintf(stderr, "kilter: %s:%d:%d: warning: regulator \"%s\": unit%s %s held at the %s limit "
                "(%+d steps): its set point %.1f V is not reached (the regulator table has the relay "
                "voltages)\n", f->path ? f->path : "", rg->loc.line, rg->loc.col, rg->name ? rg->name : "?",
                n > 1 ? "s" : "", units, dir > 0 ? "raise" : "lower", dir * rg->steps, rg->voltage_level_v);
    }
}
