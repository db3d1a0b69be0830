/* The analysis table (ss_analysis_*) and the sinks its entries feed: every entry complete, a
 * callback sink getting exactly the rows of the table-returning calls, labelled rows in CSV. */
#define _DEFAULT_SOURCE /* mkdtemp */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "ss_test.h"

/* An RC low-pass with every analysis: R = 1 kohm and C = 1 / (2 pi 1 kHz 1 kohm), so its
 * corner 1 / (2 pi R C) is 1 kHz, the middle point of the .ac sweep. */
static const char *const RC_TEXT = "rc low-pass\n"
                                   "v1 in 0 dc 1 ac 1 sin(1 0.1 1k)\n"
                                   "r1 in out 1k\n"
                                   "c1 out 0 159.15494309189535n\n"
                                   ".op\n"
                                   ".dc v1 0 2 0.5\n"
                                   ".ac lin 3 500 1.5k\n"
                                   ".stage in=v1 out=out\n"
                                   ".tran 0.1m 2m\n"
                                   ".noise v(out) v1\n"
                                   ".large_signal freq=1k amp=0.1\n";

/* What a callback sink was given. */
typedef struct collected {
    int began, ended, ok;
    int n_cols;
    char **names;
    char *label_col;
    long n_rows;
    double *values; /* n_rows x n_cols */
    char **labels;  /* per row, NULL when none came */
} collected;

static char *dup_text(const char *s)
{
    char *d = malloc(strlen(s) + 1);
    assert_non_null(d);
    return strcpy(d, s);
}

static int cb_begin(void *ctx, int n_cols, const char *const *names, long n_rows_hint)
{
    (void)n_rows_hint;
    collected *c = ctx;
    c->began++;
    c->n_cols = n_cols;
    c->names = calloc((size_t)(n_cols ? n_cols : 1), sizeof *c->names);
    for (int j = 0; j < n_cols; j++)
        c->names[j] = dup_text(names[j]);
    return 0;
}

static int cb_label(void *ctx, const char *label_col, const char *label)
{
    collected *c = ctx;
    if (!c->label_col)
        c->label_col = dup_text(label_col);
    c->labels = realloc(c->labels, (size_t)(c->n_rows + 1) * sizeof *c->labels);
    c->labels[c->n_rows] = dup_text(label); /* the row that follows is row n_rows */
    return 0;
}

static int cb_row(void *ctx, const double *values, int n_cols)
{
    collected *c = ctx;
    assert_int_equal(n_cols, c->n_cols);
    c->values = realloc(c->values, (size_t)(c->n_rows + 1) * (size_t)n_cols * sizeof *c->values);
    memcpy(c->values + (size_t)c->n_rows * (size_t)n_cols, values,
           (size_t)n_cols * sizeof *values);
    if (!c->label_col) {
        c->labels = realloc(c->labels, (size_t)(c->n_rows + 1) * sizeof *c->labels);
        c->labels[c->n_rows] = NULL;
    }
    c->n_rows++;
    return 0;
}

static int cb_end(void *ctx, int ok)
{
    collected *c = ctx;
    c->ended++;
    c->ok = ok;
    return 0;
}

static const ss_sink_callbacks CALLBACKS = {cb_begin, cb_row, cb_end, cb_label};

static void collected_clear(collected *c)
{
    for (int j = 0; j < c->n_cols; j++)
        free(c->names[j]);
    for (long i = 0; i < c->n_rows; i++)
        free(c->labels[i]);
    free(c->names);
    free(c->labels);
    free(c->values);
    free(c->label_col);
    memset(c, 0, sizeof *c);
}

/* The callback sink got exactly t: its columns, labels and every value bit for bit. */
static void assert_same_rows(const collected *c, const ss_table *t)
{
    assert_int_equal(c->began, 1);
    assert_int_equal(c->ended, 1);
    assert_int_equal(c->ok, 1);
    assert_int_equal(c->n_cols, ss_table_cols(t));
    for (int j = 0; j < c->n_cols; j++)
        assert_string_equal(c->names[j], ss_table_col_name(t, j));
    assert_int_equal(c->n_rows, ss_table_rows(t));
    for (int i = 0; i < ss_table_rows(t); i++) {
        const char *label = ss_table_row_label(t, i);
        if (label)
            assert_string_equal(c->labels[i], label);
        else
            assert_null(c->labels[i]);
        for (int j = 0; j < c->n_cols; j++) {
            double a = c->values[(size_t)i * (size_t)c->n_cols + (size_t)j];
            double b = ss_table_get(t, i, j);
            assert_true(memcmp(&a, &b, sizeof a) == 0 || (isnan(a) && isnan(b)));
        }
    }
}

static int analysis_index(const char *name)
{
    for (int i = 0; i < ss_analysis_count(); i++)
        if (strcmp(ss_analysis_name(i), name) == 0)
            return i;
    return -1;
}

/* A fresh context per run, so both runs being compared start from the same state. */
static ss_solver *fresh_sv(const ss_circuit *ckt)
{
    ss_solver *sv = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    return sv;
}

static void emit_to_callbacks(const ss_circuit *ckt, int i, collected *c)
{
    ss_solver *sv = fresh_sv(ckt);
    ss_sink *sink = NULL;
    ss_error err = {0};
    assert_int_equal(ss_sink_create(&CALLBACKS, c, &sink, &err), SS_OK);
    ss_status st = ss_analysis_emit(sv, i, sink, &err);
    if (st != SS_OK)
        print_error("%s: %s\n", ss_analysis_name(i), err.message);
    assert_int_equal(st, SS_OK);
    ss_sink_destroy(&sink);
    ss_solver_destroy(&sv);
}

static void test_every_entry_is_complete(void **state)
{
    (void)state;
    int n = ss_analysis_count();
    assert_true(n >= 7);
    for (int i = 0; i < n; i++) {
        const char *name = ss_analysis_name(i), *out = ss_analysis_output(i);
        const char *dir = ss_analysis_directive(i);
        assert_non_null(name);
        assert_non_null(out);
        assert_non_null(dir);
        assert_true(name[0] != '\0');
        assert_int_equal(dir[0], '.');
        size_t lo = strlen(out);
        assert_true(lo > 4 && strcmp(out + lo - 4, ".csv") == 0);
        for (int k = 0; k < i; k++) {
            assert_string_not_equal(name, ss_analysis_name(k));
            assert_string_not_equal(out, ss_analysis_output(k));
        }
    }
    assert_null(ss_analysis_name(n));
    assert_null(ss_analysis_output(-1));
    assert_int_equal(ss_analysis_wanted(NULL, 0), 0);
    ss_error err = {0};
    assert_int_equal(ss_analysis_emit(NULL, n, NULL, &err), SS_ERR_INPUT);
    /* run's order: the operating point first, .dc after the analyses at the operating point */
    assert_int_equal(analysis_index("op"), 0);
    assert_true(analysis_index("ac") < analysis_index("stage"));
    assert_true(analysis_index("stage") < analysis_index("dc"));
    assert_true(analysis_index("dc") < analysis_index("noise"));
}

/* The main table of the analysis called name from its table-returning call; an analysis this
 * test does not know goes through a table sink. */
static ss_table *table_of(const char *name, int i, ss_solver *sv)
{
    ss_table *t = NULL, *s1 = NULL;
    ss_error err = {0};
    ss_status st;
    if (strcmp(name, "op") == 0)
        st = ss_op_solve(sv, &t, NULL, &err);
    else if (strcmp(name, "ac") == 0)
        st = ss_ac_sweep_run(sv, &t, &err);
    else if (strcmp(name, "stage") == 0)
        st = ss_stage_run(sv, &t, &s1, &err);
    else if (strcmp(name, "dc") == 0)
        st = ss_dc_sweep_run(sv, &t, &err);
    else if (strcmp(name, "tran") == 0)
        st = ss_tran_run(sv, &t, &err);
    else if (strcmp(name, "large_signal") == 0)
        st = ss_stage_large_signal(sv, &t, &err);
    else if (strcmp(name, "noise") == 0)
        st = ss_noise_run(sv, &t, NULL, NULL, &err);
    else {
        ss_sink *sink = NULL;
        st = ss_sink_table(&sink, &err);
        if (st == SS_OK)
            st = ss_analysis_emit(sv, i, sink, &err);
        t = st == SS_OK ? ss_sink_take_table(sink) : NULL;
        ss_sink_destroy(&sink);
    }
    if (st != SS_OK)
        print_error("%s: %s\n", name, err.message);
    assert_int_equal(st, SS_OK);
    ss_table_destroy(&s1);
    return t;
}

/* Every entry's emit runs and sends the rows its table-returning call gives. */
static void test_every_emit_gives_its_rows(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(RC_TEXT);
    for (int i = 0; i < ss_analysis_count(); i++) {
        ss_solver *sv = fresh_sv(ckt);
        assert_int_equal(ss_analysis_wanted(sv, i), 1);
        ss_table *t = table_of(ss_analysis_name(i), i, sv);
        ss_solver_destroy(&sv);
        assert_non_null(t);
        assert_true(ss_table_rows(t) > 0 && ss_table_cols(t) > 0);
        collected c = {0};
        emit_to_callbacks(ckt, i, &c);
        assert_same_rows(&c, t);
        collected_clear(&c);
        ss_table_destroy(&t);
    }
    ss_test_destroy(&ckt);
}

static void test_wanted_follows_the_requests(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("op only\nv1 a 0 1\nr1 a 0 1k\n.ac dec 1 1 10\n");
    ss_solver *sv = ss_test_sv(ckt);
    assert_int_equal(ss_analysis_wanted(sv, analysis_index("op")), 1); /* always */
    assert_int_equal(ss_analysis_wanted(sv, analysis_index("ac")), 1);
    assert_int_equal(ss_analysis_wanted(sv, analysis_index("stage")), 0);
    assert_int_equal(ss_analysis_wanted(sv, analysis_index("dc")), 0);
    assert_int_equal(ss_analysis_wanted(sv, analysis_index("large_signal")), 0);
    ss_error err = {0};
    assert_int_equal(ss_solver_set_stage(sv, "v1", "a", &err), SS_OK);
    assert_int_equal(ss_analysis_wanted(sv, analysis_index("stage")), 1);
    /* the large-signal figures need a stage, not an .ac sweep */
    assert_int_equal(ss_solver_set_test_frequency(sv, 1e3, &err), SS_OK);
    assert_int_equal(ss_analysis_wanted(sv, analysis_index("large_signal")), 1);
    ss_test_destroy(&ckt);
}

static void test_ac_callbacks_match_ac_sweep_run(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(RC_TEXT);
    collected c = {0};
    emit_to_callbacks(ckt, analysis_index("ac"), &c);
    ss_solver *sv = fresh_sv(ckt);
    ss_table *ac = NULL;
    ss_error err = {0};
    assert_int_equal(ss_ac_sweep_run(sv, &ac, &err), SS_OK);
    assert_same_rows(&c, ac);
    /* at the corner f = 1 / (2 pi R C) an RC low-pass passes 1 / sqrt(2) of its input */
    int f_col = ss_table_col_index(ac, "freq_hz"), vm_col = ss_table_col_index(ac, "vm(out)");
    assert_true(f_col >= 0 && vm_col >= 0);
    ss_assert_close(ss_table_get(ac, 1, f_col), 1000.0, 1e-15, 0.0);
    ss_assert_close(ss_table_get(ac, 1, vm_col), 1.0 / sqrt(2.0), 1e-12, 0.0);
    ss_assert_close(ss_table_get(ac, 1, ss_table_col_index(ac, "vp(out)")), -45.0, 1e-10, 0.0);
    ss_table_destroy(&ac);
    ss_solver_destroy(&sv);
    collected_clear(&c);
    ss_test_destroy(&ckt);
}

static void test_op_callbacks_match_op_solve(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(RC_TEXT);
    collected c = {0};
    emit_to_callbacks(ckt, analysis_index("op"), &c);
    assert_non_null(c.label_col);
    assert_string_equal(c.label_col, "quantity");
    ss_solver *sv = fresh_sv(ckt);
    ss_table *op = NULL;
    ss_error err = {0};
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_OK);
    assert_same_rows(&c, op);
    ss_assert_close(ss_table_lookup(op, "v(out)", ss_table_col_index(op, "value")), 1.0, 1e-12,
                    0.0);
    ss_table_destroy(&op);
    ss_solver_destroy(&sv);
    collected_clear(&c);
    ss_test_destroy(&ckt);
}

static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *buf = malloc((size_t)n + 1);
    assert_non_null(buf);
    assert_int_equal(fread(buf, 1, (size_t)n, f), (size_t)n);
    fclose(f);
    *len = (size_t)n;
    return buf;
}

/* op.csv through a CSV sink (labelled rows) is the file ss_table_write_csv writes of the
 * table, and a tee gives a table sink beside it the same rows. */
static void test_labelled_csv_sink_and_tee(void **state)
{
    (void)state;
    const char *base = getenv("TMPDIR");
    char dir[512], a[600], b[600];
    snprintf(dir, sizeof dir, "%s/stagesim_reg_XXXXXX", base && base[0] ? base : P_tmpdir);
    assert_non_null(mkdtemp(dir));
    snprintf(a, sizeof a, "%s/table.csv", dir);
    snprintf(b, sizeof b, "%s/stream.csv", dir);
    ss_circuit *ckt = ss_test_parse(RC_TEXT);
    ss_error err = {0};
    ss_table *op = NULL;
    ss_solver *sv = fresh_sv(ckt);
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_OK);
    assert_int_equal(ss_table_write_csv(op, a, &err), SS_OK);
    ss_solver_destroy(&sv);
    ss_sink *csv = NULL, *table = NULL, *tee = NULL;
    assert_int_equal(ss_sink_csv(b, &csv, &err), SS_OK);
    assert_int_equal(ss_sink_table(&table, &err), SS_OK);
    assert_int_equal(ss_sink_tee(csv, table, &tee, &err), SS_OK);
    sv = fresh_sv(ckt);
    assert_int_equal(ss_op_emit(sv, tee, NULL, &err), SS_OK);
    ss_table *kept = ss_sink_take_table(table);
    assert_non_null(kept);
    assert_int_equal(ss_table_rows(kept), ss_table_rows(op));
    for (int i = 0; i < ss_table_rows(op); i++) {
        assert_string_equal(ss_table_row_label(kept, i), ss_table_row_label(op, i));
        ss_assert_close(ss_table_get(kept, i, 0), ss_table_get(op, i, 0), 0.0, 0.0);
    }
    size_t la, lb;
    char *ta = slurp(a, &la), *tb = slurp(b, &lb);
    assert_int_equal(la, lb);
    assert_memory_equal(ta, tb, la);
    free(ta);
    free(tb);
    ss_table_destroy(&kept);
    ss_table_destroy(&op);
    ss_sink_destroy(&tee);
    ss_sink_destroy(&table);
    ss_sink_destroy(&csv);
    ss_solver_destroy(&sv);
    ss_test_destroy(&ckt);
    unlink(a);
    unlink(b);
    rmdir(dir);
}

static void test_col_index_by_name(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(RC_TEXT);
    ss_table *dc = NULL;
    ss_error err = {0};
    assert_int_equal(ss_dc_sweep_run(ss_test_sv(ckt), &dc, &err), SS_OK);
    assert_int_equal(ss_table_col_index(dc, "v1"), 0);
    assert_int_equal(ss_table_col_index(dc, "v(out)"), ss_table_cols(dc) - 1);
    assert_int_equal(ss_table_col_index(dc, "v(nowhere)"), -1);
    assert_int_equal(ss_table_col_index(dc, NULL), -1);
    assert_int_equal(ss_table_col_index(NULL, "v1"), -1);
    ss_table_destroy(&dc);
    ss_test_destroy(&ckt);
}

static void test_table_values_one_copy(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("rc\nv1 in 0 ac 1\nr1 in out 1k\nc1 out 0 1u\n"
                                    ".ac dec 5 10 10k\n");
    ss_table *ac = NULL;
    ss_error err = {0};
    assert_int_equal(ss_ac_sweep_run(ss_test_sv(ckt), &ac, &err), SS_OK);
    long n = (long)ss_table_rows(ac) * ss_table_cols(ac);
    double *v = calloc((size_t)n, sizeof *v);
    assert_non_null(v);
    assert_int_equal(ss_table_values(ac, v, n - 1), -1); /* no room: nothing copied */
    assert_int_equal(ss_table_values(ac, v, n), n);
    for (int r = 0; r < ss_table_rows(ac); r++)
        for (int c = 0; c < ss_table_cols(ac); c++) {
            double a = v[(long)r * ss_table_cols(ac) + c], b = ss_table_get(ac, r, c);
            assert_memory_equal(&a, &b, sizeof a);
        }
    free(v);
    ss_table_destroy(&ac);
    ss_test_destroy(&ckt);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_table_values_one_copy),
        cmocka_unit_test(test_every_entry_is_complete),
        cmocka_unit_test(test_every_emit_gives_its_rows),
        cmocka_unit_test(test_wanted_follows_the_requests),
        cmocka_unit_test(test_ac_callbacks_match_ac_sweep_run),
        cmocka_unit_test(test_op_callbacks_match_op_solve),
        cmocka_unit_test(test_labelled_csv_sink_and_tee),
        cmocka_unit_test(test_col_index_by_name),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
