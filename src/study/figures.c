/* Figure collection: one labelled table of everything a check or a study can look at -- the
 * operating point, the stage summary and stage quantities at named frequencies. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "study/study.h"

/* The value column of a labelled result table (op.csv, the summaries, the figures). */
static int value_col(const ss_table *t) { return ss_table_col_index(t, "value"); }

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
    int col = value_col(figs);
    if (row_hint >= 0 && row_hint < figs->n_rows && strcmp(figs->row_labels[row_hint], label) == 0)
        return ss_table_get(figs, row_hint, col);
    return ss_table_lookup(figs, label, col);
}

/* The figures beyond op.csv, by name, in the order ss_figures_compute lists them; the unit
 * tests check these names against the tables the analyses produce. */
static const char *const NOISE_FIGURES[] = {"out_noise_rms_v", "in_noise_rms_v",
                                            "noise_figure_db"};
/* only with a band of its own (.noise band=, --noise-band), only with a weighting */
static const char *const NOISE_BAND_FIGURES[] = {"out_noise_band_rms_v", "in_noise_band_rms_v"};
static const char *const NOISE_A_FIGURES[] = {"out_noise_a_rms_v", "in_noise_a_rms_v"};
static const char *const STAGE_FIGURES[] = {"gain_mid_db", "f_mid_hz",     "f_low_hz",
                                            "f_high_hz",   "bandwidth_hz", "zin_mid_ohm",
                                            "zout_mid_ohm"};
/* ss_stage_large_signal's rows: a voltage-source stage's names, a current-source stage's */
static const char *const LS_FIGURES_V[] = {
    "ls_freq_hz",       "qs_gain",          "swing_pos_v", "swing_neg_v",    "vin_at_swing_pos_v",
    "vin_at_swing_neg_v", "swing_pos_tran_v", "swing_neg_tran_v", "thd_amp_v", "thd_pct",
    "thd_err_pct",      "thd_target_pct",   "vin_at_thd_v"};
static const char *const LS_FIGURES_I[] = {
    "ls_freq_hz",       "qs_gain",          "swing_pos_v", "swing_neg_v",    "iin_at_swing_pos_a",
    "iin_at_swing_neg_a", "swing_pos_tran_v", "swing_neg_tran_v", "thd_amp_a", "thd_pct",
    "thd_err_pct",      "thd_target_pct",   "iin_at_thd_a"};
#define N_OF(a) (sizeof(a) / sizeof((a)[0]))

static int in_list(const char *name, const char *const *list, size_t n)
{
    for (size_t k = 0; k < n; k++)
        if (strcmp(name, list[k]) == 0)
            return 1;
    return 0;
}

/* Large-signal figures cost transient runs (a second or more each): they are computed only
 * when a limit names one (of either source kind), so tolerance runs do not pay for them
 * unasked. */
static int limits_want_large_signal(const ss_limits *limits)
{
    for (int i = 0; limits && i < limits->n; i++)
        if (in_list(limits->items[i].quantity, LS_FIGURES_V, N_OF(LS_FIGURES_V)) ||
            in_list(limits->items[i].quantity, LS_FIGURES_I, N_OF(LS_FIGURES_I)))
            return 1;
    return 0;
}

/* The large-signal names of the circuit's stage (by its source's kind). */
static const char *const *large_signal_names(const ss_solver *sv, size_t *n)
{
    int e = sv->stage.in ? circuit_find_elem(sv->ckt, sv->stage.in) : -1;
    int current = e >= 0 && elem_is(&sv->elem[e], DEV_DRIVES_CURRENT);
    *n = current ? N_OF(LS_FIGURES_I) : N_OF(LS_FIGURES_V);
    return current ? LS_FIGURES_I : LS_FIGURES_V;
}

/* A figure at a frequency (a limit's QUANTITY@FREQ) named by an earlier limit too: solved and
 * listed once. */
static int freq_figure_seen(const ss_limits *limits, int i)
{
    for (int j = 0; j < i; j++)
        if (strcmp(limits->items[j].quantity, limits->items[i].quantity) == 0)
            return 1;
    return 0;
}

static ss_status freq_needs_stage(const limit *lim, ss_error *err)
{
    return err_set(err, SS_ERR_INPUT, lim->file, lim->line,
                   "limit on %s needs a stage: add `.stage in=SOURCE out=NODE`", lim->label);
}

void figures_names(const ss_solver *sv, const ss_limits *limits, dev_report_fn fn, void *sink)
{
    op_rows(sv, NULL, fn, sink);
    if (sv->ckt->ac.want && sv->stage.in)
        for (size_t k = 0; k < N_OF(STAGE_FIGURES); k++)
            fn(sink, STAGE_FIGURES[k], NULL, SS_NAN);
    if (noise_runs(sv)) {
        for (size_t k = 0; k < N_OF(NOISE_FIGURES); k++)
            fn(sink, NOISE_FIGURES[k], NULL, SS_NAN);
        for (size_t k = 0; noise_has_band(sv) && k < N_OF(NOISE_BAND_FIGURES); k++)
            fn(sink, NOISE_BAND_FIGURES[k], NULL, SS_NAN);
        for (size_t k = 0; sv->noise.weight == NOISE_WEIGHT_A && k < N_OF(NOISE_A_FIGURES); k++)
            fn(sink, NOISE_A_FIGURES[k], NULL, SS_NAN);
    }
    if (limits_want_large_signal(limits) && sv->stage.in) {
        size_t n;
        const char *const *names = large_signal_names(sv, &n);
        for (size_t k = 0; k < n; k++)
            fn(sink, names[k], NULL, SS_NAN);
    }
    for (int i = 0; limits && sv->stage.in && i < limits->n; i++)
        if (limits->items[i].at_freq && !freq_figure_seen(limits, i))
            fn(sink, limits->items[i].quantity, NULL, SS_NAN);
}

/* ---- ss_limits_check_names ---------------------------------------------------------------- */

typedef struct name_check {
    const ss_limits *limits;
    unsigned char *found;
    int n_left;
} name_check;

static void mark_found(void *vs, const char *quantity, const char *elem_name, double value)
{
    (void)value;
    name_check *nc = vs;
    char label[1200];
    const char *name = quantity;
    if (elem_name) {
        snprintf(label, sizeof label, "%s(%s)", quantity, elem_name);
        name = label;
    }
    for (int i = 0; nc->n_left > 0 && i < nc->limits->n; i++)
        if (!nc->found[i] && strcmp(nc->limits->items[i].quantity, name) == 0) {
            nc->found[i] = 1;
            nc->n_left--;
        }
}

/* Why a name is no figure of this circuit, when it is one of another. */
static const char *missing_because(const ss_solver *sv, const char *q)
{
    if (in_list(q, STAGE_FIGURES, N_OF(STAGE_FIGURES)))
        return !sv->ckt->ac.want   ? (sv->stage.in ? "a stage summary metric needs an .ac sweep"
                                                  : "a stage summary metric needs an .ac sweep "
                                                    "and a stage (.stage or --in/--out)")
                               : "a stage summary metric needs a stage (.stage or --in/--out)";
    if (in_list(q, NOISE_FIGURES, N_OF(NOISE_FIGURES)))
        return "a noise figure needs .noise and an .ac sweep or a noise band (band=F1..F2)";
    if (in_list(q, NOISE_BAND_FIGURES, N_OF(NOISE_BAND_FIGURES)))
        return "a band noise figure needs .noise with a band of its own (.noise ... "
               "band=F1..F2, or --noise-band F1..F2)";
    if (in_list(q, NOISE_A_FIGURES, N_OF(NOISE_A_FIGURES)))
        return "an A-weighted noise figure needs .noise with weight=a (or --noise-weight a)";
    if (in_list(q, LS_FIGURES_V, N_OF(LS_FIGURES_V)) ||
        in_list(q, LS_FIGURES_I, N_OF(LS_FIGURES_I)))
        return !sv->stage.in ? "a large-signal figure needs a stage (.stage or --in/--out)"
                              : "the stage source's kind names its input figures: vin_..._v "
                                "and thd_amp_v for a V source, iin_..._a and thd_amp_a for an "
                                "I source";
    if (strncmp(q, "power(", 6) == 0)
        return "power(NAME) is the DC power of an element of the netlist that carries it: a "
               "resistor, source, diode or transistor, not a capacitor or inductor";
    return "the figures are the op.csv quantities of this circuit's nodes and devices, the "
           "stage summary metrics, the noise and large-signal figures and QUANTITY@FREQ; "
           "docs/checks.md lists them";
}

ss_status ss_limits_check_names(const ss_limits *limits, const ss_solver *sv, ss_error *err)
{
    if (!limits || limits->n == 0)
        return SS_OK;
    for (int i = 0; i < limits->n; i++)
        if (limits->items[i].at_freq && !sv->stage.in)
            return freq_needs_stage(&limits->items[i], err);
    name_check nc = {limits, ss_alloc((size_t)limits->n), limits->n};
    if (!nc.found)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    figures_names(sv, limits, mark_found, &nc);
    ss_status st = SS_OK;
    for (int i = 0; i < limits->n && st == SS_OK; i++) {
        const limit *lim = &limits->items[i];
        if (!nc.found[i])
            st = err_set(err, SS_ERR_INPUT, lim->file, lim->line,
                         "limit on '%s': no such figure (%s)", lim->label,
                         missing_because(sv, lim->quantity));
    }
    ss_free(nc.found);
    return st;
}

ss_status ss_figures_compute(ss_solver *sv, const ss_limits *limits, ss_table **out_figures,
                             ss_error *err)
{
    ss_table *op = NULL, *stage = NULL, *summary = NULL;
    ss_status st = ss_op_solve(sv, &op, NULL, err);
    if (st != SS_OK)
        return st;
    ss_table *t = table_create(1, "metric");
    int bad = !t || table_set_col(t, 0, "value") != 0;
    for (int i = 0; !bad && i < op->n_rows; i++)
        bad |= add_row(t, op->row_labels[i], ss_table_get(op, i, value_col(op))) != 0;
    ss_table_destroy(&op);
    if (!bad && sv->ckt->ac.want && sv->stage.in) {
        st = ss_stage_run(sv, &stage, &summary, err);
        if (st != SS_OK) {
            ss_table_destroy(&t);
            return st;
        }
        for (int i = 0; !bad && i < summary->n_rows; i++)
            bad |= add_row(t, summary->row_labels[i],
                           ss_table_get(summary, i, value_col(summary))) != 0;
        ss_table_destroy(&stage);
        ss_table_destroy(&summary);
    }
    if (!bad && noise_runs(sv)) {
        ss_table *nsum = NULL;
        st = ss_noise_run(sv, NULL, &nsum, NULL, err);
        if (st != SS_OK) {
            ss_table_destroy(&t);
            return st;
        }
        for (size_t k = 0; !bad && k < N_OF(NOISE_FIGURES); k++)
            bad |= add_row(t, NOISE_FIGURES[k],
                           ss_table_lookup(nsum, NOISE_FIGURES[k], value_col(nsum))) != 0;
        for (size_t k = 0; !bad && noise_has_band(sv) && k < N_OF(NOISE_BAND_FIGURES); k++)
            bad |= add_row(t, NOISE_BAND_FIGURES[k],
                           ss_table_lookup(nsum, NOISE_BAND_FIGURES[k], value_col(nsum))) != 0;
        for (size_t k = 0; !bad && sv->noise.weight == NOISE_WEIGHT_A && k < N_OF(NOISE_A_FIGURES);
             k++)
            bad |= add_row(t, NOISE_A_FIGURES[k],
                           ss_table_lookup(nsum, NOISE_A_FIGURES[k], value_col(nsum))) != 0;
        ss_table_destroy(&nsum);
    }
    int want_ls = limits_want_large_signal(limits);
    if (!bad && want_ls && sv->stage.in) {
        ss_table *ls = NULL;
        st = ss_stage_large_signal(sv, &ls, err);
        if (st != SS_OK) {
            ss_table_destroy(&t);
            return st;
        }
        for (int i = 0; !bad && i < ls->n_rows; i++)
            bad |= add_row(t, ls->row_labels[i], ss_table_get(ls, i, value_col(ls))) != 0;
        ss_table_destroy(&ls);
    }
    for (int i = 0; !bad && limits && i < limits->n; i++) {
        const limit *lim = &limits->items[i];
        if (!lim->at_freq)
            continue;
        if (freq_figure_seen(limits, i))
            continue;
        if (!sv->stage.in) {
            ss_table_destroy(&t);
            return freq_needs_stage(lim, err);
        }
        double complex g;
        double zin, zout;
        st = stage_at_frequency(sv, lim->freq_hz, &g, &zin, &zout, err);
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
        double v = ss_table_lookup(figures, lim->quantity, value_col(figures));
        int found = 0;
        for (int r = 0; r < figures->n_rows && !found; r++)
            found = strcmp(figures->row_labels[r], lim->quantity) == 0;
        if (!found) {
            ss_table_destroy(&t);
            return err_set(err, SS_ERR_INPUT, lim->file, lim->line,
                           "limit on '%s': no such figure in this run (figures are the op.csv "
                           "quantities, the stage summary metrics and QUANTITY@FREQ)",
                           lim->label);
        }
        if (lim->magnitude)
            v = fabs(v);
        double *row = table_add_row(t, lim->label);
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
