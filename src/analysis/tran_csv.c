/* The .tran analysis: tran.csv, one row per output point with the written nodes' voltages,
 * sent to a sink as the points are solved. The integration is tran.c's. */
#include <math.h>

#include "analysis/tran.h"
#include "devices/wave.h"
#include "output/sink.h"

#define TRAN_MAX_CELLS 1e8 /* tran.csv values held in memory (800 MB) */

typedef struct tran_rows {
    const ss_solver *sv;
    ss_sink *sink;
    double *row;
    long n_rows;
    ss_status st; /* the sink's, when it refused a row */
    ss_error *err;
} tran_rows;

static int sink_point(void *vctx, long k, double t_s, const double *x)
{
    (void)k;
    tran_rows *s = vctx;
    int c = 0;
    s->row[c++] = t_s;
    for (int j = 0; j < solver_n_out_nodes(s->sv); j++)
        s->row[c++] = x[node_unknown(solver_out_node(s->sv, j))];
    s->st = sink_row(s->sink, s->row, s->err);
    if (s->st != SS_OK)
        return 1;
    s->n_rows++;
    return 0;
}

/* Sources that repeat faster than every second sample are aliased in tran.csv, though the
 * integration follows them: say so. */
static void warn_aliasing(ss_solver *sv)
{
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
}

/* The rows go to the sink as the points are solved. The size limit is a table's (every value
 * held in memory) but holds for every sink, so the run's behaviour does not depend on where
 * the rows go. */
ss_status ss_tran_emit(ss_solver *sv, ss_sink *sink, ss_error *err)
{
    if (!sv->ckt->tran.want)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0, "the netlist has no .tran analysis");
    ss_status st = solver_prepare(sv, err);
    if (st != SS_OK)
        return st;
    int n_user = solver_n_out_nodes(sv);
    long n_rows = (long)floor((sv->ckt->tran.stop_s - sv->ckt->tran.start_s) / sv->ckt->tran.step_s + 1e-9) + 1;
    if ((double)n_rows * (1.0 + n_user) > TRAN_MAX_CELLS)
        return err_set(err, SS_ERR_LIMIT, sv->ckt->tran.file, sv->ckt->tran.line,
                       ".tran: %ld rows of %d columns exceed the table limit of %.0e values; "
                       "use a larger step or a later start",
                       n_rows, 1 + n_user, TRAN_MAX_CELLS);
    static const char *const lead[] = {"time_s"};
    static const char *const fmt[] = {"v(%s)"};
    int n_cols = 0;
    const char **names = analysis_col_names(sv, lead, 1, fmt, 1, &n_cols);
    tran_rows rows = {sv, sink, NULL, 0, SS_OK, err};
    rows.row = names ? ss_alloc((size_t)n_cols * sizeof *rows.row) : NULL;
    st = rows.row ? sink_begin(sink, n_cols, names, n_rows, err)
                  : err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st == SS_OK) {
        warn_aliasing(sv);
        tran_cfg cfg = {.tstep_s = sv->ckt->tran.step_s,
                        .tstop_s = sv->ckt->tran.stop_s,
                        .tstart_s = sv->ckt->tran.start_s,
                        .method = sv->ckt->tran.method == 1 ? TRAN_GEAR2 : TRAN_TRAP,
                        .tol_rel = sv->ckt->tran.tol_rel,
                        .tol_v = sv->ckt->tran.tol_v,
                        .on_point = sink_point,
                        .ctx = &rows};
        st = tran_run(sv, &cfg, NULL, err);
        if (st == SS_OK && rows.st != SS_OK)
            st = rows.st;
        if (st == SS_OK && rows.n_rows != n_rows)
            st = err_set(err, SS_ERR_INTERNAL, sv->ckt->file, 0,
                         "transient: %ld rows written, %ld expected", rows.n_rows, n_rows);
        st = sink_end(sink, st, err);
    }
    ss_free(names);
    ss_free(rows.row);
    return st;
}

ss_status ss_tran_run(ss_solver *sv, ss_table **out_tran, ss_error *err)
{
    ss_sink *sink = NULL;
    ss_status st = ss_sink_table(&sink, err);
    if (st == SS_OK)
        st = ss_tran_emit(sv, sink, err);
    if (st == SS_OK)
        *out_tran = ss_sink_take_table(sink);
    ss_sink_destroy(&sink);
    return st;
}
