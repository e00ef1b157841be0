/* kilter program: the commands and the option handling they share.
 *
 * Every command is `int kl_cmd_NAME(int argc, char **argv)` with argv[0] the
 * command name; it returns the process exit code (KL_EXIT_*). */
#ifndef KILTER_CLI_H
#define KILTER_CLI_H

#include <stdio.h>
#include "kilter/error.h"
#include "kilter/feeder.h"
#include "kilter/lines.h"
#include "kilter/table.h"
#include "kilter/geojson.h"
#include "kilter/geo.h"

enum {
    KL_EXIT_OK = 0,
    KL_EXIT_INPUT = 2,    /* bad input file or value */
    KL_EXIT_NOCONV = 3,   /* did not converge */
    KL_EXIT_IO = 4,       /* cannot read or write a file */
    KL_EXIT_NOMEM = 5,    /* out of memory */
    KL_EXIT_USAGE = 64    /* bad command-line usage */
};

typedef enum { KL_FMT_TABLE = 0, KL_FMT_CSV = 1, KL_FMT_JSON = 2 } kl_cli_format;

/* A command's own option: `--name VALUE` (has_arg) or `--name`. */
typedef struct {
    const char *name;     /* without the leading dashes, e.g. "html" */
    int has_arg;
    const char *metavar;  /* e.g. "FILE" */
    const char *help;
} kl_cli_opt;

#define KL_CLI_MAX_OPTS 32

typedef struct {
    const char *cmd;
    kl_cli_format format;
    const char *output;                 /* -o FILE, NULL for standard output */
    const char *feeder;                 /* FEEDER argument, or the demo feeder */
    int feeder_is_demo;
    const char *val[KL_CLI_MAX_OPTS];   /* own options, in the order given to kl_cli_parse:
                                           the value, "" for a flag given, NULL when absent */
} kl_cli_args;

/* Parses `COMMAND [options] [FEEDER]` (options and FEEDER in any order).
 * Returns -1 to go on, or an exit code: 0 after --help, 64 on bad usage. */
int kl_cli_parse(kl_cli_args *a, int argc, char **argv, const char *summary,
                 const kl_cli_opt *opts, int nopts);

/* Command output: to standard output (path NULL), or to a file of the
 * command's output set (kilter/output.h): every file a command writes is put
 * in place when the command has succeeded (kl_cli_outputs_finish, called by
 * main), all of them or none, never over a file the command read. */
typedef struct {
    FILE *f;         /* write the output here */
    const char *path;
} kl_cli_out;

int kl_cli_out_open(kl_cli_out *o, const char *path); /* 0, or an exit code */
/* Standard output: flushed and checked; a file: checked, put in place at the
 * end.  0, or an exit code. */
int kl_cli_out_close(kl_cli_out *o);
void kl_cli_out_abandon(kl_cli_out *o); /* not written whole: no output file of the command changes */
/* A file the command reads (the feeder, a rules file): never an output. */
void kl_cli_input(const char *path);
/* Called by main with the command's exit code: checks standard output, then
 * puts every output file in place if all went well, or drops them all.
 * Returns the exit code (KL_EXIT_IO when writing failed). */
int kl_cli_outputs_finish(int rc);

/* Writes the tables as the sheets of one workbook (kilter/table.h) to a file
 * of the command's output set; 0, or an exit code after the message. */
int kl_cli_workbook(const char *path, const kl_table_sheet *sheets, int n);
/* Writes the feeder with results as GeoJSON (kilter/geojson.h) to a file of
 * the command's output set: the buses converted to longitude and latitude
 * (kilter/geo.h), each feature's properties its row of the tables given.
 * 0, or an exit code after the message. */
int kl_cli_geojson(const char *path, const kl_feeder *f, const kl_geojson_props *buses,
                   const kl_geojson_props *sections, kl_geojson_extra section_extra,
                   kl_geojson_extra bus_extra, const void *extra_ctx, const char *caution);
#define KL_CLI_GEOJSON_HELP "also write the feeder with its results as GeoJSON (WGS 84 " \
    "longitude/latitude; needs the feeder's 'coordinates')"
#define KL_CLI_WORKBOOK_HELP "also write the result tables as the sheets of one spreadsheet workbook (.xlsx)"

/* Prints every item as `kilter: file:line:col: element: message` on stderr. */
void kl_cli_print_errors(const kl_errors *e);
void kl_cli_error(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
int kl_cli_exit_code(kl_status s);
/* The bundled demo feeder, found from the program's own location: installed,
 * PREFIX/share/kilter/demo/quillmere-f3.yaml; in the build tree, the build's
 * copy (cli_demo.c). */
const char *kl_cli_demo_path(void);
/* Loads a->feeder, printing the errors; 0 or an exit code. */
int kl_cli_load(const kl_cli_args *a, kl_feeder **f);
struct kl_flow_result;
/* A warning on stderr for each regulator held at a tap limit with its set
 * point not reached (cli_regulators.c). */
void kl_cli_regulator_warnings(const kl_feeder *f, const struct kl_flow_result *r);

/* The form of Carson's earth-return terms named by --earth-return (NULL: the
 * default, the complete series).  0, or 64 after printing the accepted values.
 * The old spelling --carson full|approx is read by kl_cli_parse until 0.2. */
int kl_cli_carson_form(const char *cmd, const char *value, kl_carson_form *form);
/* The form as outputs name it: "complete" or "modified". */
const char *kl_cli_carson_name(kl_carson_form form);
#define KL_CLI_EARTH_RETURN_OPT { "earth-return", 1, "complete|modified", \
    "Carson's earth-return terms: complete series (default) or modified (first terms only)" }

/* Output helpers: a JSON string with escapes; a CSV field quoted when needed. */
void kl_cli_json_str(FILE *f, const char *s);
/* A JSON number with 8 significant digits; NaN and infinities (undefined
 * indices, empty extremes) become null, which JSON allows and %g would not. */
void kl_cli_json_num(FILE *f, double x);
void kl_cli_csv_str(FILE *f, const char *s);

int kl_cmd_check(int argc, char **argv);
int kl_cmd_lines(int argc, char **argv);
int kl_cmd_flow(int argc, char **argv);
int kl_cmd_allocate(int argc, char **argv);
int kl_cmd_study(int argc, char **argv);
int kl_cmd_rebalance(int argc, char **argv);
int kl_cmd_import(int argc, char **argv);
int kl_cmd_series(int argc, char **argv);
int kl_cmd_faults(int argc, char **argv);

#endif
