/* kilter: a feeder file from tables, as a GIS exports them (kl_import_feeder).
 *
 * The network's topology and loads come as CSV tables with our own column
 * names (docs/import.md): buses (name, coordinates, description), sections
 * (from, to, phases, length, construction, switch, transformer or regulator by
 * name), loads (a row per load and phase) and capacitors (a row per phase).
 * Everything the tables name (conductors, cables, layouts, constructions,
 * transformers, regulators) and the source come from a library: a feeder file
 * without those lists.  The feeder file written is the library followed by
 * one line per element in table order, so two imports diff line by line. */
#ifndef KILTER_IMPORT_H
#define KILTER_IMPORT_H

#include <stdio.h>
#include "kilter/error.h"

typedef struct {
    const char *library;    /* feeder file: the source, equipment and constructions (required) */
    const char *buses;      /* CSV paths; NULL: no such table */
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
