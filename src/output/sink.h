/* Sinks: where an analysis sends its rows (a table in memory, a CSV file written as the rows
 * come, a caller's callbacks, two sinks at once). An analysis calls begin once with its
 * columns, row per row, then end; it never knows which sink it feeds. */
#ifndef SS_SINK_H
#define SS_SINK_H

#include "util/table.h"
#include "util/util.h"

struct ss_sink {
    /* label_col: the header of a labelled table's label column (op.csv's "quantity"), NULL for
     * a table without labels; n_rows_hint: how many rows are coming (0 unknown); names: n_cols
     * column names. The analysis keeps label_col and names valid until end. */
    ss_status (*begin)(ss_sink *s, const char *label_col, int n_cols, const char *const *names,
                       long n_rows_hint, ss_error *err);
    /* label: the row's label (NULL when the table has none) */
    ss_status (*row)(ss_sink *s, const char *label, const double *values, ss_error *err);
    /* st: how the analysis ended (SS_OK: commit what was written; else discard it) */
    ss_status (*end)(ss_sink *s, ss_status st, ss_error *err);
    void (*destroy)(ss_sink *s);
    int n_cols;
    const char *label_col;
};

/* The sink's calls, checked: a sink that refuses a row stops the analysis with its error. When
 * begin fails the analysis stops there, without end. */
static inline ss_status sink_begin_labelled(ss_sink *s, const char *label_col, int n_cols,
                                            const char *const *names, long n_rows_hint,
                                            ss_error *err)
{
    s->n_cols = n_cols;
    s->label_col = label_col;
    return s->begin(s, label_col, n_cols, names, n_rows_hint, err);
}
static inline ss_status sink_begin(ss_sink *s, int n_cols, const char *const *names,
                                   long n_rows_hint, ss_error *err)
{
    return sink_begin_labelled(s, NULL, n_cols, names, n_rows_hint, err);
}
static inline ss_status sink_row_labelled(ss_sink *s, const char *label, const double *values,
                                          ss_error *err)
{
    return s->row(s, label, values, err);
}
static inline ss_status sink_row(ss_sink *s, const double *values, ss_error *err)
{
    return s->row(s, NULL, values, err);
}
static inline ss_status sink_end(ss_sink *s, ss_status st, ss_error *err)
{
    return s->end(s, st, err);
}

/* A table made another way sent to a sink whole: begin (labelled when the table is), every
 * row, end. Returns SS_OK or the sink's error. */
SS_HIDDEN ss_status sink_send_table(ss_sink *s, const ss_table *t, ss_error *err);

#endif
