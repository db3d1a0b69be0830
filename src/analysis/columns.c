/* The column names of the per-node tables (dc.csv, ac.csv, tran.csv) for their sinks: the
 * leading columns, then one column per written node and format. What fills them is the
 * analyses'. */
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"

const char **analysis_col_names(const ss_solver *sv, const char *const *lead, int n_lead,
                                const char *const *fmts, int n_fmts, int *n_cols)
{
    int n_out = solver_n_out_nodes(sv);
    int n = n_lead + n_out * n_fmts;
    size_t text = 0;
    for (int k = 0; k < n_lead; k++)
        text += strlen(lead[k]) + 1;
    for (int j = 0; j < n_out; j++)
        for (int k = 0; k < n_fmts; k++)
            text += (size_t)snprintf(NULL, 0, fmts[k], sv->node_name[solver_out_node(sv, j)]) + 1;
    /* the pointers, then their text, in one block */
    const char **names = ss_alloc((size_t)(n ? n : 1) * sizeof *names + text);
    if (!names)
        return NULL;
    char *p = (char *)(names + (n ? n : 1));
    int c = 0;
    for (int k = 0; k < n_lead; k++) {
        size_t len = strlen(lead[k]) + 1;
        memcpy(p, lead[k], len);
        names[c++] = p;
        p += len;
    }
    for (int j = 0; j < n_out; j++)
        for (int k = 0; k < n_fmts; k++) {
            const char *node = sv->node_name[solver_out_node(sv, j)];
            size_t len = (size_t)snprintf(NULL, 0, fmts[k], node) + 1;
            snprintf(p, len, fmts[k], node);
            names[c++] = p;
            p += len;
        }
    *n_cols = n;
    return names;
}
