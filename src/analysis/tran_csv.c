/* The .tran analysis: tran.csv, one row per output point with the written nodes' voltages,
 * held in a table sized before the run. The integration is tran.c's. */
#include <math.h>

#include "analysis/tran.h"
#include "devices/wave.h"

#define TRAN_MAX_CELLS 1e8 /* tran.csv values held in memory (800 MB) */

typedef struct tran_sink {
    const ss_circuit *ckt;
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
    for (int j = 0; j < circuit_n_out_nodes(s->ckt); j++)
        row[c++] = x[node_unknown(circuit_out_node(s->ckt, j))];
    return 0;
}

ss_status ss_tran_run(ss_circuit *ckt, ss_table **out_tran, ss_error *err)
{
    if (!ckt->want_tran)
        return err_set(err, SS_ERR_INPUT, ckt->file, 0, "the netlist has no .tran analysis");
    ss_status st = analysis_prepare(ckt, err);
    if (st != SS_OK)
        return st;
    int n_user = circuit_n_out_nodes(ckt);
    ss_table *t = table_create(1 + n_user, NULL);
    if (!t)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    static const char *const fmt[] = {"v(%s)"};
    int bad = table_set_col(t, 0, "time_s") | analysis_node_cols(t, ckt, 1, fmt, 1);
    long n_rows = (long)floor((ckt->tran_stop_s - ckt->tran_start_s) / ckt->tran_step_s + 1e-9) + 1;
    if ((double)n_rows * (1.0 + n_user) > TRAN_MAX_CELLS) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_LIMIT, ckt->tran_file, ckt->tran_line,
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
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        if (!elem_is_source(e) || !e->wave)
            continue;
        double period = wave_period(e->wave);
        if (isfinite(period) && ckt->tran_step_s > 0.5 * period)
            circuit_warn(ckt,
                         "%s: .tran samples its %s of period %g s every %g s, less than twice a "
                         "period: tran.csv aliases it (the integration follows it; a step of "
                         "%g s or less shows it)",
                         e->name,
                         ((const src_wave *)e->wave)->kind == WAVE_SIN ? "sine" : "pulse train",
                         period,
                         ckt->tran_step_s, 0.5 * period);
    }
    tran_sink sink = {ckt, t};
    tran_cfg cfg = {.tstep_s = ckt->tran_step_s,
                    .tstop_s = ckt->tran_stop_s,
                    .tstart_s = ckt->tran_start_s,
                    .method = ckt->tran_method == 1 ? TRAN_GEAR2 : TRAN_TRAP,
                    .tol_rel = ckt->tran_tol_rel,
                    .tol_v = ckt->tran_tol_v,
                    .on_point = sink_point,
                    .ctx = &sink};
    st = tran_run(ckt, &cfg, NULL, err);
    if (st == SS_OK && ss_table_rows(t) != n_rows)
        st = err_set(err, SS_ERR_INTERNAL, ckt->file, 0, "transient: %d rows written, %ld expected",
                     ss_table_rows(t), n_rows);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out_tran = t;
    return SS_OK;
}
