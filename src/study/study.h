/* Studies on top of the analyses: limits and checks, figure collection, sweeps and tolerance
 * (Monte Carlo) runs, preferred values. The solving itself is src/analysis's. */
#ifndef SS_STUDY_H
#define SS_STUDY_H

#include "analysis/analysis.h"

typedef struct limit {
    char quantity[128]; /* lower case; "gain_db@1000" style when at a frequency */
    char base[64];      /* the quantity without its frequency */
    int at_freq;
    double freq_hz;
    double lo, hi; /* -HUGE_VAL / HUGE_VAL when open */
    const char *file;
    int line;
} limit;

struct ss_limits {
    limit *items;
    int n, cap;
    ss_arena arena;
};

/* Per-frequency stage quantities a limit may name with `@ FREQ`. */
SS_HIDDEN int study_is_point_quantity(const char *base);
/* The value of figure label in a figures table, looked for first at row_hint; NaN if absent. */
SS_HIDDEN double figures_value(const ss_table *figs, int row_hint, const char *label);
/* The labels of ss_figures_compute's table for ckt and limits, in its order, without solving:
 * fn(sink, quantity, name, NaN) per figure, name the element or node of an op.csv row
 * ("ic", "q1": ic(q1)) and NULL for the others. */
SS_HIDDEN void figures_names(const ss_circuit *ckt, const ss_limits *limits, dev_report_fn fn,
                             void *sink);
/* Parses one limit line (no comment); 0 ok, else the error set with file:line. */
SS_HIDDEN ss_status limits_parse_line(ss_limits *l, const char *text, const char *file, int line,
                                      ss_error *err);

/* The significands of series E12/E24/E96 (times *scale); returns the count, 0 if unknown. */
SS_HIDDEN int eseries_table(int series, const int **values, double *scale);

#endif
