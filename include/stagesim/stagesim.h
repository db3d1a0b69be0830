/* stagesim public C API: parse a netlist, solve its operating point, sweeps and AC response,
 * and write the results. The command-line tool is a thin client of exactly this header. */
#ifndef STAGESIM_H
#define STAGESIM_H

/* The whole public API, in tiers (docs/api.md):
 *   core.h  status and errors, circuits, solver contexts, tables, sinks, op/dc/ac/noise/tran,
 *           the analysis table, sanity warnings
 *   stage.h stage figures and the large-signal test
 *   study.h limits, checks, sweeps, tolerance runs, sensitivities, preferred values, shards
 *   plot.h  plots, the report, output sets
 *   draft.h a first design of a stage from its kind and requirements (docs/design.md)
 *   refine.h the preferred-value lattice, refine (a design search over free values) */
#include "stagesim/core.h"
#include "stagesim/draft.h"
#include "stagesim/plot.h"
#include "stagesim/refine.h"
#include "stagesim/stage.h"
#include "stagesim/study.h"

#endif
