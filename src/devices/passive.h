/* Parse helpers shared by simple device files (common.c). */
#ifndef SS_PASSIVE_H
#define SS_PASSIVE_H
#include "devices/device.h"
/* Nodes 1..n_nodes of the line into e->node; 0 ok, -1 error set. */
SS_HIDDEN int parse_nodes(pctx *p, element *e, int n_nodes);
/* `Xname a b value` with value > 0 (or >= 0 when allow_zero); 0 ok, -1 error set. */
SS_HIDDEN int parse_two_node_value(pctx *p, element *e, const char *what, int allow_zero);
/* An optional area from token `first` on: nothing (area 1), `VALUE` or `area = VALUE`, > 0, and
 * nothing after it; sets e->area. 0 ok, -1 error set. */
SS_HIDDEN int parse_optional_area(pctx *p, element *e, int first);
/* Independent source line: `n+ n- [DC] value [AC mag [phase_deg]]`; 0 ok, -1 error set. */
SS_HIDDEN int parse_source_spec(pctx *p, element *e);
/* The source's AC phasor in this sweep (its own, 1 when it is the stage source, or 0). */
SS_HIDDEN double complex source_ac_phasor(const element *e, const dev_ac_ctx *ac);
#endif
