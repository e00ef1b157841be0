/* kilter import: a feeder file from CSV tables as a GIS exports them, with a
 * library feeder file for the source, equipment and constructions
 * (kilter/import.h; the table layouts in docs/import.md). */
#include <stdio.h>
#include "kilter/import.h"
#include "cli.h"

enum { OPT_LIBRARY, OPT_TRANSFORMERS, OPT_REGULATORS, OPT_BUSES, OPT_SECTIONS, OPT_LOADS,
       OPT_CAPACITORS, NOPTS };

static const kl_cli_opt opts[NOPTS] = {
    {"library", 1, "FILE", "feeder file with the source, conductors, cables, layouts and "
     "constructions the tables name, and any equipment not in a table (required)"},
    {"transformers", 1, "CSV", "transformers: name, rating_kva, high_kv, high_connection, low_kv, "
     "low_connection, resistance_pct, reactance_pct, ... (docs/import.md)"},
    {"regulators", 1, "CSV", "regulators: name, connection, phases, control, steps, step_pct, "
     "voltage_level_v, bandwidth_v, pt_ratio, ct_primary_a, ... (docs/import.md)"},
    {"buses", 1, "CSV", "buses: name, x, y, description"},
    {"sections", 1, "CSV", "sections: name, from, to, phases, length_m|_ft|_km|_mi, construction, "
     "switch, transformer, regulator"},
    {"loads", 1, "CSV", "loads, a row per phase: name, bus or section, connection, model, phase, kw, "
     "kvar, ... (docs/import.md)"},
    {"capacitors", 1, "CSV", "capacitors, a row per phase: name, bus, connection, phase, kvar, "
     "rated_voltage_kv"},
};

int kl_cmd_import(int argc, char **argv)
{
    kl_cli_args a;
    int rc = kl_cli_parse(&a, argc, argv, "Builds a kilter feeder file from CSV tables of buses, "
                          "sections, loads, capacitors, transformers and regulators\n(as a GIS exports "
                          "them) and a library feeder file holding the source and the constructions "
                          "they name; the file\nis written only when it loads, every problem located "
                          "at its table's line and column.", opts, NOPTS);
    if (rc >= 0)
        return rc;
    if (!a.feeder_is_demo) {
        kl_cli_error("import: takes no FEEDER ('%s'): give the library with --library and the "
                     "tables with --transformers, --regulators, --buses, --sections, --loads, "
                     "--capacitors", a.feeder);
        return KL_EXIT_USAGE;
    }
    if (a.format != KL_FMT_TABLE) {
        kl_cli_error("import: writes a feeder file (YAML): --format does not apply");
        return KL_EXIT_USAGE;
    }
    if (!a.val[OPT_LIBRARY] || !a.val[OPT_SECTIONS]) {
        kl_cli_error("import: needs --library FILE and --sections CSV (kilter import --help)");
        return KL_EXIT_USAGE;
    }
    kl_import_tables in = { a.val[OPT_LIBRARY], a.val[OPT_TRANSFORMERS], a.val[OPT_REGULATORS],
                            a.val[OPT_BUSES], a.val[OPT_SECTIONS], a.val[OPT_LOADS],
                            a.val[OPT_CAPACITORS] };
    for (int k = 0; k < NOPTS; k++)
        if (a.val[k])
            kl_cli_input(a.val[k]);
    kl_cli_out out;
    if ((rc = kl_cli_out_open(&out, a.output)))
        return rc;
    kl_errors e;
    kl_errors_init(&e);
    kl_status st = kl_import_feeder(out.f, &in, &e);
    kl_cli_print_errors(&e);
    kl_errors_free(&e);
    if (st) {
        kl_cli_out_abandon(&out); /* nothing of a feeder that does not load is written */
        return kl_cli_exit_code(st);
    }
    return kl_cli_out_close(&out);
}
