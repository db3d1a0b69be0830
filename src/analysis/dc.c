/* DC sweep of one source (optionally nested in a second): the swept values reach the sources
 * through the load context; each point starts from the last solution, a point that fails
 * falls back to a full operating-point solve, and every point passes the Kirchhoff check. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"
#include "output/sink.h"

static int sweep_points(const dc_sweep_spec *s)
{
    return (int)floor((s->stop - s->start) / s->step + 1e-9) + 1;
}

static element *sweep_source(ss_solver *sv, const dc_sweep_spec *s, ss_error *err)
{
    int idx = circuit_find_elem(sv->ckt, s->src);
    if (idx < 0 || !elem_is_source(&sv->elem[idx])) {
        err_set(err, SS_ERR_INPUT, s->file, s->line,
                ".dc: '%s' is not an independent voltage or current source", s->src);
        return NULL;
    }
    return &sv->elem[idx];
}

/* The present value of swept source e at a point: the drive's entry (the inner sweep's first). */
static double swept_value(const dev_src_drive *drive, const element *e)
{
    dev_load_ctx lc = {.drive = drive};
    return source_value(e, &lc);
}

/* One sweep point with the sources at drive: Newton from the last point's solution *x when
 * there is one (the operating point's settings), else -- or when that fails -- the full
 * operating point, *x then pointing at sv->x_op. Either answer passes the same Kirchhoff check
 * (newton_kcl_residual; op_solve_driven's own). Returns SS_OK, or the error in e2. */
static ss_status solve_point(ss_solver *sv, const dev_src_drive *drive, double **x,
                             ss_error *e2)
{
    if (*x) {
        newton_cfg cfg = newton_cfg_op(sv, LOAD_FROM_X, drive);
        newton_result r;
        ss_status st = newton_solve(sv, *x, &cfg, &r);
        sv->last_rcond = r.rcond;
        if (st == SS_OK) {
            int worst;
            if (newton_kcl_residual(sv, *x, drive, &worst) > 1.0)
                return newton_kcl_error(sv, worst, e2);
            return SS_OK;
        }
    }
    ss_status st = op_solve_driven(sv, drive, NULL, e2);
    if (st == SS_OK)
        *x = sv->x_op;
    return st;
}

/* ---- the selected elements' columns (ss_solver_select_devices) -------------------------- */

typedef struct dev_cols {
    const char **names; /* the column names, filled from `at` */
    char *text;         /* their characters (NULL: only measuring into `len`) */
    size_t len;
    double *row; /* the values, filled from `at` */
    int at;
} dev_cols;

static void dev_col_name(void *vc, const char *quantity, const char *elem_name, double value)
{
    (void)value;
    dev_cols *c = vc;
    size_t n = strlen(quantity) + strlen(elem_name) + 3;
    if (c->text) {
        snprintf(c->text + c->len, n, "%s(%s)", quantity, elem_name);
        c->names[c->at++] = c->text + c->len;
    }
    c->len += n;
}

static void dev_col_value(void *vc, const char *quantity, const char *elem_name, double value)
{
    (void)quantity;
    (void)elem_name;
    dev_cols *c = vc;
    c->row[c->at++] = value;
}

/* The selected elements' rows at x (NULL: their names) through fn, as op.csv has them. */
static void dev_rows(ss_solver *sv, const double *x, dev_report_fn fn, dev_cols *c)
{
    double vt = analysis_vt(sv);
    double *scratch = x ? op_power_begin(sv) : NULL;
    for (int k = 0; k < sv->n_dc_devices; k++) {
        const element *e = &sv->elem[sv->dc_devices[k]];
        if (e->ops->report)
            e->ops->report(e, x, vt, sv->ckt->opt.gmin, fn, c);
        if (elem_has_power(e))
            fn(c, "power", e->name, x ? op_power_w(sv, e, x, scratch) : SS_NAN);
    }
}

/* The node columns' names (analysis_col_names) followed by the selected elements': one block
 * the caller frees with ss_free; NULL out of memory. */
static const char **dc_col_names(ss_solver *sv, const char *const *lead, int n_lead,
                                 int *n_cols)
{
    static const char *const fmt[] = {"v(%s)"};
    int n_node_cols = 0;
    const char **node_names = analysis_col_names(sv, lead, n_lead, fmt, 1, &n_node_cols);
    if (!node_names || sv->n_dc_devices == 0) {
        *n_cols = n_node_cols;
        return node_names;
    }
    int n_dev = 0;
    for (int k = 0; k < sv->n_dc_devices; k++)
        n_dev += solver_device_n_rows(&sv->elem[sv->dc_devices[k]]);
    dev_cols c = {0};
    dev_rows(sv, NULL, dev_col_name, &c); /* measures the names' length */
    size_t ptrs = (size_t)(n_node_cols + n_dev) * sizeof(const char *);
    /* one block: the pointers, the node columns' names copied, the elements' */
    size_t node_len = 0;
    for (int j = 0; j < n_node_cols; j++)
        node_len += strlen(node_names[j]) + 1;
    const char **all = ss_alloc(ptrs + c.len + node_len);
    if (!all) {
        ss_free(node_names);
        return NULL;
    }
    char *text = (char *)all + ptrs;
    for (int j = 0; j < n_node_cols; j++) {
        size_t len = strlen(node_names[j]) + 1;
        memcpy(text, node_names[j], len);
        all[j] = text;
        text += len;
    }
    ss_free(node_names);
    c = (dev_cols){all, text, 0, NULL, n_node_cols};
    dev_rows(sv, NULL, dev_col_name, &c);
    *n_cols = n_node_cols + n_dev;
    return all;
}

ss_status ss_dc_sweep_emit(ss_solver *sv, ss_sink *sink, ss_error *err)
{
    if (sv->ckt->dc.n == 0)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0, "the netlist has no .dc sweep");
    element *src[2] = {NULL, NULL};
    for (int k = 0; k < sv->ckt->dc.n; k++)
        if (!(src[k] = sweep_source(sv, &sv->ckt->dc.sweep[k], err)))
            return SS_ERR_INPUT;
    int n_inner = sweep_points(&sv->ckt->dc.sweep[0]);
    int n_outer = sv->ckt->dc.n == 2 ? sweep_points(&sv->ckt->dc.sweep[1]) : 1;
    if ((double)n_inner * n_outer > 1e7)
        return err_set(err, SS_ERR_LIMIT, sv->ckt->dc.sweep[0].file, sv->ckt->dc.sweep[0].line,
                       ".dc: more than 1e7 points in all");
    const char *lead[2] = {src[0]->name, src[1] ? src[1]->name : NULL};
    int n_cols = 0;
    const char **names = dc_col_names(sv, lead, sv->ckt->dc.n, &n_cols);
    double *row = names ? ss_alloc((size_t)n_cols * sizeof *row) : NULL;
    ss_status st = row ? sink_begin(sink, n_cols, names, (long)n_inner * n_outer, err)
                       : err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st != SS_OK) {
        ss_free(names);
        ss_free(row);
        return st;
    }
    /* the swept values reach the sources through the load context: set[0] the inner sweep's,
     * set[1] the outer one's */
    dev_src_value set[2] = {{src[0], 0.0}, {src[1], 0.0}};
    dev_src_drive drive = {set, sv->ckt->dc.n};
    double *x = NULL;
    for (int jo = 0; jo < n_outer && st == SS_OK; jo++) {
        if (src[1])
            set[1].value = sv->ckt->dc.sweep[1].start + jo * sv->ckt->dc.sweep[1].step;
        for (int ji = 0; ji < n_inner && st == SS_OK; ji++) {
            set[0].value = sv->ckt->dc.sweep[0].start + ji * sv->ckt->dc.sweep[0].step;
            ss_error e2 = {0};
            st = solve_point(sv, &drive, &x, &e2);
            if (st != SS_OK) {
                err_set(err, st, e2.file, e2.line, ".dc at %s = %g%s: %s", src[0]->name,
                        swept_value(&drive, src[0]), src[1] ? " (outer sweep point)" : "",
                        e2.message);
                break;
            }
            int c = 0;
            row[c++] = swept_value(&drive, src[0]);
            if (src[1])
                row[c++] = swept_value(&drive, src[1]);
            for (int j = 0; j < solver_n_out_nodes(sv); j++)
                row[c++] = x[node_unknown(solver_out_node(sv, j))];
            if (sv->n_dc_devices > 0) {
                dev_cols dc = {NULL, NULL, 0, row, c};
                dev_rows(sv, x, dev_col_value, &dc);
            }
            st = sink_row(sink, row, err);
        }
    }
    solver_lost_op(sv); /* x_op now holds the last sweep point */
    sv->op_serial++;
    st = sink_end(sink, st, err);
    ss_free(names);
    ss_free(row);
    return st;
}

ss_status ss_dc_sweep_run(ss_solver *sv, ss_table **out_dc, ss_error *err)
{
    ss_sink *sink = NULL;
    ss_status st = ss_sink_table(&sink, err);
    if (st == SS_OK)
        st = ss_dc_sweep_emit(sv, sink, err);
    if (st == SS_OK)
        *out_dc = ss_sink_take_table(sink);
    ss_sink_destroy(&sink);
    return st;
}
