/* kilter: a feeder file from tables, as a GIS exports them (kl_import_feeder).
 *
 * The network's topology and loads come as CSV tables with our own column
 * names (docs/import.md): transformers and regulators (a row per bank, a
 * column per setting), buses (name, coordinates, description), sections
 * (from, to, phases, length, construction, switch, transformer or regulator by
 * name), loads (a row per load and phase) and capacitors (a row per phase).
 * The rest (the source, conductors, cables, layouts, constructions, and any
 * transformer or regulator not in a table) comes from a library: a feeder file
 * without the lists the tables give.  The feeder file written is the library followed by
 * one line per element in table order, so two imports diff line by line. */
#ifndef KILTER_IMPORT_H
#define KILTER_IMPORT_H

#include <stdio.h>
#include "kilter/error.h"

typedef struct {
    const char *library;    /* feeder file: the source, equipment and constructions (required) */
    const char *transformers; /* CSV paths; NULL: no such table */
    const char *regulators;
    const char *buses;
    const char *sections;
    const char *loads;
    const char *capacitors;
} kl_import_tables;

/* Builds the feeder file and loads it as kl_feeder_load would, then writes it
 * to o, only when it loads: every problem, the loader's included, is reported
 * at the table's file, line and column (the cell it comes from) or the
 * library's, with the element and what to fix.  Warnings of the loader are
 * added to err as warnings.  KL_EINPUT, KL_EIO, KL_ENOMEM. */
kl_status kl_import_feeder(FILE *o, const kl_import_tables *in, kl_errors *err);

#endif
