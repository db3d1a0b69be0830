/* Result tables: named columns of doubles with optional row labels; the container every
 * analysis returns and every writer reads. Writing is src/output's. */
#include <math.h>
#include <string.h>

#include "util/table.h"

ss_table *table_create(int n_cols, const char *label_col)
{
    ss_table *t = ss_alloc(sizeof *t);
    if (!t)
        return NULL;
    t->n_cols = n_cols;
    t->has_labels = label_col != NULL;
    t->col_names = arena_alloc(&t->arena, (size_t)(n_cols ? n_cols : 1) * sizeof(char *));
    t->label_col = label_col ? arena_strdup(&t->arena, label_col) : NULL;
    if (!t->col_names || (label_col && !t->label_col)) {
        arena_clear(&t->arena);
        ss_free(t);
        return NULL;
    }
    return t;
}

int table_set_col(ss_table *t, int col, const char *name)
{
    t->col_names[col] = arena_strdup(&t->arena, name);
    return t->col_names[col] ? 0 : -1;
}

int table_reserve(ss_table *t, int n_rows)
{
    if (n_rows <= t->cap_rows)
        return 0;
    double *nd = ss_realloc(t->data, (size_t)n_rows * (size_t)(t->n_cols ? t->n_cols : 1) *
                                         sizeof *nd);
    if (!nd)
        return -1;
    t->data = nd;
    if (t->has_labels) {
        const char **nl = ss_realloc(t->row_labels, (size_t)n_rows * sizeof *nl);
        if (!nl)
            return -1;
        t->row_labels = nl;
    }
    t->cap_rows = n_rows;
    return 0;
}

double *table_add_row(ss_table *t, const char *label)
{
    if (t->n_rows == t->cap_rows && table_reserve(t, t->cap_rows ? t->cap_rows * 2 : 64) != 0)
        return NULL;
    if (t->has_labels) {
        const char *l = arena_strdup(&t->arena, label ? label : "");
        if (!l)
            return NULL;
        t->row_labels[t->n_rows] = l;
    }
    double *row = t->data + (size_t)t->n_rows * (size_t)t->n_cols;
    for (int j = 0; j < t->n_cols; j++)
        row[j] = SS_NAN;
    t->n_rows++;
    return row;
}

int ss_table_rows(const ss_table *t) { return t ? t->n_rows : 0; }
int ss_table_cols(const ss_table *t) { return t ? t->n_cols : 0; }

const char *ss_table_col_name(const ss_table *t, int col)
{
    return (t && col >= 0 && col < t->n_cols) ? t->col_names[col] : NULL;
}

int ss_table_col_index(const ss_table *t, const char *name)
{
    for (int j = 0; t && name && j < t->n_cols; j++)
        if (strcmp(t->col_names[j], name) == 0)
            return j;
    return -1;
}

const char *ss_table_row_label(const ss_table *t, int row)
{
    return (t && t->has_labels && row >= 0 && row < t->n_rows) ? t->row_labels[row] : NULL;
}

double ss_table_get(const ss_table *t, int row, int col)
{
    if (!t || row < 0 || row >= t->n_rows || col < 0 || col >= t->n_cols)
        return SS_NAN;
    return t->data[(size_t)row * (size_t)t->n_cols + (size_t)col];
}

long ss_table_values(const ss_table *t, double *out, long n)
{
    if (!t || !out)
        return -1;
    long all = (long)t->n_rows * t->n_cols;
    if (n < all)
        return -1;
    if (all > 0)
        memcpy(out, t->data, (size_t)all * sizeof *out);
    return all;
}

double ss_table_lookup(const ss_table *t, const char *label, int col)
{
    if (!t || !t->has_labels)
        return SS_NAN;
    for (int i = 0; i < t->n_rows; i++)
        if (strcmp(t->row_labels[i], label) == 0)
            return ss_table_get(t, i, col);
    return SS_NAN;
}

void ss_table_destroy(ss_table **pt)
{
    if (!pt || !*pt)
        return;
    ss_table *t = *pt;
    ss_free(t->data);
    ss_free(t->row_labels);
    arena_clear(&t->arena);
    ss_free(t);
    *pt = NULL;
}
