/* Figure collection: one labelled table of everything a check or a study can look at -- the
 * operating point, the stage summary and stage quantities at named frequencies. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "study/study.h"

static int add_row(ss_table *t, const char *label, double v)
{
    double *row = table_add_row(t, label);
    if (!row)
        return -1;
    row[0] = v;
    return 0;
}

double figures_value(const ss_table *figs, int row_hint, const char *label)
{
    /* the same netlist gives the same figures in the same order at every point, so the row
     * at the hint is almost always the one: no search over every figure of a large circuit */
    if (row_hint >= 0 && row_hint < figs->n_rows && strcmp(figs->row_labels[row_hint], label) == 0)
        return figs->data[row_hint];
    return ss_table_lookup(figs, label, 0);
}

ss_status ss_figures_compute(ss_circuit *ckt, const ss_limits *limits, ss_table **out_figures,
                             ss_error *err)
{
    ss_table *op = NULL, *stage = NULL, *summary = NULL;
    ss_status st = ss_op_solve(ckt, &op, NULL, err);
    if (st != SS_OK)
        return st;
    ss_table *t = table_create(1, "metric");
    int bad = !t || table_set_col(t, 0, "value") != 0;
    for (int i = 0; !bad && i < op->n_rows; i++)
        bad |= add_row(t, op->row_labels[i], op->data[i]) != 0;
    ss_table_destroy(&op);
    if (!bad && ckt->want_ac && ckt->stage_in) {
        st = ss_stage_run(ckt, &stage, &summary, err);
        if (st != SS_OK) {
            ss_table_destroy(&t);
            return st;
        }
        for (int i = 0; !bad && i < summary->n_rows; i++)
            bad |= add_row(t, summary->row_labels[i], summary->data[i]) != 0;
        ss_table_destroy(&stage);
        ss_table_destroy(&summary);
    }
    if (!bad && ckt->want_noise && ckt->want_ac) {
        ss_table *nsum = NULL;
        st = ss_noise_run(ckt, NULL, &nsum, NULL, err);
        if (st != SS_OK) {
            ss_table_destroy(&t);
            return st;
        }
        static const char *const keep[] = {"out_noise_rms_v", "in_noise_rms_v", "noise_figure_db"};
        for (size_t k = 0; !bad && k < sizeof keep / sizeof keep[0]; k++)
            bad |= add_row(t, keep[k], ss_table_lookup(nsum, keep[k], 0)) != 0;
        ss_table_destroy(&nsum);
    }
    /* large-signal figures cost transient runs (a second or more each): only when a limit
     * names one, so tolerance runs do not pay for them unasked */
    int want_ls = 0;
    static const char *const ls_names[] = {"ls_freq_hz", "qs_gain", "swing_pos_v", "swing_neg_v",
                                           "vin_at_swing_pos_v", "vin_at_swing_neg_v",
                                           "swing_pos_tran_v", "swing_neg_tran_v", "thd_amp_v",
                                           "thd_pct", "thd_err_pct", "thd_target_pct",
                                           "vin_at_thd_v",
                                           "iin_at_swing_pos_a", "iin_at_swing_neg_a",
                                           "thd_amp_a", "iin_at_thd_a"};
    for (int i = 0; limits && i < limits->n; i++)
        for (size_t k = 0; k < sizeof ls_names / sizeof ls_names[0]; k++)
            want_ls |= strcmp(limits->items[i].quantity, ls_names[k]) == 0;
    if (!bad && want_ls && ckt->stage_in) {
        ss_table *ls = NULL;
        st = ss_stage_large_signal(ckt, &ls, err);
        if (st != SS_OK) {
            ss_table_destroy(&t);
            return st;
        }
        for (int i = 0; !bad && i < ls->n_rows; i++)
            bad |= add_row(t, ls->row_labels[i], ls->data[i]) != 0;
        ss_table_destroy(&ls);
    }
    for (int i = 0; !bad && limits && i < limits->n; i++) {
        const limit *lim = &limits->items[i];
        if (!lim->at_freq)
            continue;
        /* a figure named by two limits is solved and listed once */
        int seen = 0;
        for (int j = 0; j < i && !seen; j++)
            seen = strcmp(limits->items[j].quantity, lim->quantity) == 0;
        if (seen)
            continue;
        if (!ckt->stage_in) {
            ss_table_destroy(&t);
            return err_set(err, SS_ERR_INPUT, lim->file, lim->line,
                           "limit on %s needs a stage: add `.stage in=SOURCE out=NODE`",
                           lim->quantity);
        }
        double complex g;
        double zin, zout;
        st = stage_at_frequency(ckt, lim->freq_hz, &g, &zin, &zout, err);
        if (st != SS_OK) {
            ss_table_destroy(&t);
            return st;
        }
        double v = strcmp(lim->base, "gain") == 0      ? cabs(g)
                   : strcmp(lim->base, "gain_db") == 0 ? 20.0 * log10(cabs(g))
                   : strcmp(lim->base, "phase_deg") == 0 ? carg(g) * 180.0 / SS_PI
                   : strcmp(lim->base, "zin_ohm") == 0   ? zin
                                                         : zout;
        bad |= add_row(t, lim->quantity, v) != 0;
    }
    if (bad) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    *out_figures = t;
    return SS_OK;
}

ss_status ss_check_evaluate(const ss_limits *l, const ss_table *figures, ss_table **out_verdicts,
                            int *n_failed, ss_error *err)
{
    static const char *const cols[] = {"measured", "lower", "upper", "margin", "pass"};
    ss_table *t = table_create(5, "quantity");
    int bad = !t;
    for (int j = 0; !bad && j < 5; j++)
        bad |= table_set_col(t, j, cols[j]) != 0;
    if (bad) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    int failed = 0;
    for (int i = 0; i < l->n; i++) {
        const limit *lim = &l->items[i];
        double v = ss_table_lookup(figures, lim->quantity, 0);
        int found = 0;
        for (int r = 0; r < figures->n_rows && !found; r++)
            found = strcmp(figures->row_labels[r], lim->quantity) == 0;
        if (!found) {
            ss_table_destroy(&t);
            return err_set(err, SS_ERR_INPUT, lim->file, lim->line,
                           "limit on '%s': no such figure in this run (figures are the op.csv "
                           "quantities, the stage summary metrics and QUANTITY@FREQ)",
                           lim->quantity);
        }
        double *row = table_add_row(t, lim->quantity);
        if (!row) {
            ss_table_destroy(&t);
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        }
        /* an empty figure (a corner outside the sweep) cannot meet a bound */
        double margin = fmin(v - lim->lo, lim->hi - v);
        int pass = !isnan(v) && margin >= 0.0;
        row[0] = v;
        row[1] = isfinite(lim->lo) ? lim->lo : SS_NAN;
        row[2] = isfinite(lim->hi) ? lim->hi : SS_NAN;
        row[3] = isnan(v) ? SS_NAN : margin;
        row[4] = pass;
        failed += !pass;
    }
    *out_verdicts = t;
    *n_failed = failed;
    return SS_OK;
}
