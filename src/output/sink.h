/* Sinks: where an analysis sends its rows (a table in memory, a CSV file written as the rows
 * come, a caller's callbacks). An analysis calls begin once with its columns, row per row,
 * then end; it never knows which sink it feeds. */
#ifndef SS_SINK_H
#define SS_SINK_H

#include "util/util.h"

struct ss_sink {
    /* n_rows_hint: how many rows are coming (0 unknown); names: n_cols column names */
    ss_status (*begin)(ss_sink *s, int n_cols, const char *const *names, long n_rows_hint,
                       ss_error *err);
    ss_status (*row)(ss_sink *s, const double *values, ss_error *err);
    /* st: how the analysis ended (SS_OK: commit what was written; else discard it) */
    ss_status (*end)(ss_sink *s, ss_status st, ss_error *err);
    void (*destroy)(ss_sink *s);
    int n_cols;
};

/* The sink's calls, checked: a sink that refuses a row stops the analysis with its error. */
static inline ss_status sink_begin(ss_sink *s, int n_cols, const char *const *names,
                                   long n_rows_hint, ss_error *err)
{
    s->n_cols = n_cols;
    return s->begin(s, n_cols, names, n_rows_hint, err);
}
static inline ss_status sink_row(ss_sink *s, const double *values, ss_error *err)
{
    return s->row(s, values, err);
}
static inline ss_status sink_end(ss_sink *s, ss_status st, ss_error *err)
{
    return s->end(s, st, err);
}

#endif
