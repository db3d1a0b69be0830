/* Result table internals (the public handle is ss_table in stagesim.h). */
#ifndef SS_TABLE_H
#define SS_TABLE_H

#include "util/util.h"

struct ss_table {
    int n_rows, n_cols, cap_rows;
    int has_labels;
    const char *label_col; /* header of the label column, e.g. "quantity" */
    int label_at;          /* the CSV column the labels are written in: before data column
                            * label_at (0: first, the usual place; a study's points table puts
                            * its text column after its numbers, src/study/runner.c) */
    const char **col_names;
    const char **row_labels;
    double *data; /* row-major */
    ss_arena arena;
};

/* label_col: header of the row-label column, or NULL for a table without labels. */
SS_HIDDEN ss_table *table_create(int n_cols, const char *label_col);
SS_HIDDEN int table_set_col(ss_table *t, int col, const char *name); /* 0 ok, -1 no memory */
SS_HIDDEN int table_reserve(ss_table *t, int n_rows);
/* Appends a row (cells NaN) and returns it; NULL on allocation failure. */
SS_HIDDEN double *table_add_row(ss_table *t, const char *label);

#endif
