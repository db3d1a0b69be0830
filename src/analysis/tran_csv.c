/* The .tran analysis: tran.csv, one row per output point with the written nodes' voltages,
 * held in a table sized before the run. The integration is tran.c's. */
#include <math.h>

#include "analysis/tran.h"
#include "devices/wave.h"

#define TRAN_MAX_CELLS 1e8 /* tran.csv values held in memory (800 MB) */

typedef struct tran_sink {
    const ss_solver *sv;
    ss_table *t;
} tran_sink;

static int sink_point(void *vctx, long k, double t_s, const double *x)
{
    (void)k;
    tran_sink *s = vctx;
    double *row = table_add_row(s->t, NULL); /* reserved: no allocation */
    if (!row)
        return 1;
    int c = 0;
    row[c++] = t_s;
    for (int j = 0; j < solver_n_out_nodes(s->sv); j++)
        row[c++] = x[node_unknown(solver_out_node(s->sv, j))];
    return 0;
}

ss_status ss_tran_run(ss_solver *sv, ss_table **out_tran, ss_error *err)
{
    if (!sv->ckt->tran.want)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0, "the netlist has no .tran analysis");
    ss_status st = solver_prepare(sv, err);
    if (st != SS_OK)
        return st;
    int n_user = solver_n_out_nodes(sv);
    ss_table *t = table_create(1 + n_user, NULL);
    if (!t)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    static const char *const fmt[] = {"v(%s)"};
    int bad = table_set_col(t, 0, "time_s") | analysis_node_cols(t, sv, 1, fmt, 1);
    long n_rows = (long)floor((sv->ckt->tran.stop_s - sv->ckt->tran.start_s) / sv->ckt->tran.step_s + 1e-9) + 1;
    if ((double)n_rows * (1.0 + n_user) > TRAN_MAX_CELLS) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_LIMIT, sv->ckt->tran.file, sv->ckt->tran.line,
                       ".tran: %ld rows of %d columns exceed the table limit of %.0e values; "
                       "use a larger step or a later start",
                       n_rows, 1 + n_user, TRAN_MAX_CELLS);
    }
    if (bad || table_reserve(t, (int)n_rows) != 0) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    /* tran.csv samples every TSTEP: a source repeating faster than every second sample is
     * aliased there, though the integration follows it */
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (!elem_is_source(e) || !e->wave)
            continue;
        double period = wave_period(e->wave);
        if (isfinite(period) && sv->ckt->tran.step_s > 0.5 * period)
            solver_warn(sv,
                         "%s: .tran samples its %s of period %g s every %g s, less than twice a "
                         "period: tran.csv aliases it (the integration follows it; a step of "
                         "%g s or less shows it)",
                         e->name,
                         ((const src_wave *)e->wave)->kind == WAVE_SIN ? "sine" : "pulse train",
                         period,
                         sv->ckt->tran.step_s, 0.5 * period);
    }
    tran_sink sink = {sv, t};
    tran_cfg cfg = {.tstep_s = sv->ckt->tran.step_s,
                    .tstop_s = sv->ckt->tran.stop_s,
                    .tstart_s = sv->ckt->tran.start_s,
                    .method = sv->ckt->tran.method == 1 ? TRAN_GEAR2 : TRAN_TRAP,
                    .tol_rel = sv->ckt->tran.tol_rel,
                    .tol_v = sv->ckt->tran.tol_v,
                    .on_point = sink_point,
                    .ctx = &sink};
    st = tran_run(sv, &cfg, NULL, err);
    if (st == SS_OK && ss_table_rows(t) != n_rows)
        st = err_set(err, SS_ERR_INTERNAL, sv->ckt->file, 0, "transient: %d rows written, %ld expected",
                     ss_table_rows(t), n_rows);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out_tran = t;
    return SS_OK;
}
