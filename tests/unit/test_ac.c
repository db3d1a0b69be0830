/* AC sweep and stage figures against standard circuit theory: first-order RC corners,
 * series RLC resonance, corners absent from the sweep, and the AC error paths. */
#define _DEFAULT_SOURCE /* mkdtemp */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "ss_test.h"

#include "netlist/circuit.h"

static void run_stage(const char *text, ss_table **stage, ss_table **summary,
                      ss_circuit **out_ckt)
{
    ss_circuit *ckt = ss_test_parse(text);
    ss_error err = {0};
    ss_table *op = NULL;
    assert_int_equal(ss_op_solve(ss_test_sv(ckt), &op, NULL, &err), SS_OK);
    ss_table_destroy(&op);
    if (ss_stage_run(ss_test_sv(ckt), stage, summary, &err) != SS_OK) {
        print_error("stage failed: %s\n", err.message);
        fail();
    }
    *out_ckt = ckt;
}

/* First-order RC low-pass: fc = 1/(2 pi R C) = 1591.54943 Hz for 1 kOhm, 100 nF; -3.0103 dB and
 * -45 degrees there (standard circuit theory, e.g. Nilsson & Riedel -- from memory). */
static void test_rc_lowpass_corner(void **state)
{
    (void)state;
    ss_table *st, *sum;
    ss_circuit *ckt;
    run_stage("rc lp\nvin in 0 ac 1\nr1 in out 1k\nc1 out 0 100n\n.ac dec 10 10 1meg\n"
              ".stage in=vin out=out\n",
              &st, &sum, &ckt);
    ss_assert_close(ss_table_lookup(sum, "f_high_hz", 0), 1591.54943, 1e-3, 0);
    assert_true(isnan(ss_table_lookup(sum, "f_low_hz", 0))); /* no low corner: empty */
    ss_assert_close(ss_table_lookup(sum, "gain_mid_db", 0), 0.0, 0, 1e-3); /* at 10 Hz */
    /* low-pass from DC: the bandwidth is f_high */
    ss_assert_close(ss_table_lookup(sum, "bandwidth_hz", 0), 1591.54943, 1e-3, 0);
    /* Zin at mid-band (10 Hz) is nearly R + 1/(jwC): dominated by C */
    ss_table_destroy(&st);
    ss_table_destroy(&sum);
    ss_test_destroy(&ckt);
}

static void test_rc_highpass_corner_and_phase(void **state)
{
    (void)state;
    ss_table *st, *sum;
    ss_circuit *ckt;
    /* 10 kOhm, 1 uF: fc = 15.9154943 Hz; lin sweep puts a point exactly on fc */
    run_stage("rc hp\nvin in 0 ac 1\nc1 in out 1u\nr1 out 0 10k\n"
              ".ac lin 3 15.9154943 1meg\n.stage in=vin out=out\n",
              &st, &sum, &ckt);
    ss_assert_close(ss_table_get(st, 0, 2), -3.0102999566, 0, 1e-6);
    ss_assert_close(ss_table_get(st, 0, 3), 45.0, 0, 1e-5);
    ss_table_destroy(&st);
    ss_table_destroy(&sum);
    ss_test_destroy(&ckt);
    run_stage("rc hp\nvin in 0 ac 1\nc1 in out 1u\nr1 out 0 10k\n"
              ".ac dec 5 1 100k\n.stage in=vin out=out\n",
              &st, &sum, &ckt);
    ss_assert_close(ss_table_lookup(sum, "f_low_hz", 0), 15.9154943, 1e-3, 0);
    assert_true(isnan(ss_table_lookup(sum, "f_high_hz", 0)));
    assert_true(isnan(ss_table_lookup(sum, "bandwidth_hz", 0)));
    ss_table_destroy(&st);
    ss_table_destroy(&sum);
    ss_test_destroy(&ckt);
}

/* Series RLC band-pass across R: f0 = 1/(2 pi sqrt(LC)) = 5032.92121 Hz, Q = 31.6227766,
 * -3 dB bandwidth f0/Q = 159.154943 Hz (10 mH, 100 nF, 10 ohm; standard circuit theory). */
static void test_series_rlc_resonance(void **state)
{
    (void)state;
    ss_table *st, *sum;
    ss_circuit *ckt;
    run_stage("rlc\nvin in 0 ac 1\nl1 in a 10m\nc1 a out 100n\nr1 out 0 10\n"
              ".ac dec 200 1k 30k\n.stage in=vin out=out\n",
              &st, &sum, &ckt);
    double fl = ss_table_lookup(sum, "f_low_hz", 0), fh = ss_table_lookup(sum, "f_high_hz", 0);
    ss_assert_close(sqrt(fl * fh), 5032.92121, 1e-3, 0); /* corners straddle f0 geometrically */
    ss_assert_close(fh - fl, 159.154943, 1e-3, 0);
    ss_assert_close(ss_table_lookup(sum, "bandwidth_hz", 0), 159.154943, 1e-3, 0);
    ss_assert_close(ss_table_lookup(sum, "f_mid_hz", 0), 5032.92121, 1e-5, 0);
    ss_assert_close(ss_table_lookup(sum, "gain_mid_db", 0), 0.0, 0, 1e-6);
    /* Zin at resonance is R; Zout is R || (jwL + 1/jwC) = R at f0 */
    ss_assert_close(ss_table_lookup(sum, "zin_mid_ohm", 0), 10.0, 5e-3, 0);
    ss_table_destroy(&st);
    ss_table_destroy(&sum);
    ss_test_destroy(&ckt);
}

static void test_ac_table_columns(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("cols\nvin in 0 ac 2 90\nr1 in out 1k\nr2 out 0 1k\n"
                                    ".ac oct 1 100 400\n");
    ss_table *ac = NULL;
    ss_error err = {0};
    assert_int_equal(ss_ac_sweep_run(ss_test_sv(ckt), &ac, &err), SS_OK);
    assert_int_equal(ss_table_rows(ac), 3); /* 100, 200, 400 Hz */
    assert_string_equal(ss_table_col_name(ac, 0), "freq_hz");
    assert_string_equal(ss_table_col_name(ac, 3), "vm(out)");
    assert_string_equal(ss_table_col_name(ac, 4), "vp(out)");
    ss_assert_close(ss_table_get(ac, 2, 0), 400.0, 1e-14, 0);
    ss_assert_close(ss_table_get(ac, 1, 3), 1.0, 1e-14, 0);  /* AC 2 halved */
    ss_assert_close(ss_table_get(ac, 1, 4), 90.0, 1e-12, 0); /* phase carried through */
    ss_table_destroy(&ac);
    ss_test_destroy(&ckt);
}

/* Node selection (ss_solver_select_nodes): the columns follow the names given, in order,
 * duplicates once; NULL goes back to every node; a missing node or ground is refused. The
 * divider's half (Ohm's law) is the value check. */
static void test_ac_node_selection(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("sel\nvin in 0 ac 2\nr1 in mid 1k\nr2 mid out 1k\n"
                                    "r3 out 0 2k\n.ac oct 1 100 200\n");
    ss_error err = {0};
    const char *names[] = {"OUT", "in", "out"};
    assert_int_equal(ss_solver_select_nodes(ss_test_sv(ckt), names, 3, &err), SS_OK);
    ss_table *ac = NULL;
    assert_int_equal(ss_ac_sweep_run(ss_test_sv(ckt), &ac, &err), SS_OK);
    assert_int_equal(ss_table_cols(ac), 5);
    assert_string_equal(ss_table_col_name(ac, 1), "vm(out)");
    assert_string_equal(ss_table_col_name(ac, 3), "vm(in)");
    ss_assert_close(ss_table_get(ac, 0, 1), 1.0, 1e-14, 0);
    ss_assert_close(ss_table_get(ac, 0, 3), 2.0, 1e-14, 0);
    ss_table_destroy(&ac);
    assert_int_equal(ss_solver_select_nodes(ss_test_sv(ckt), NULL, 0, &err), SS_OK);
    assert_int_equal(ss_ac_sweep_run(ss_test_sv(ckt), &ac, &err), SS_OK);
    assert_int_equal(ss_table_cols(ac), 7); /* in, mid, out */
    ss_table_destroy(&ac);
    const char *bad[] = {"nowhere"};
    assert_int_equal(ss_solver_select_nodes(ss_test_sv(ckt), bad, 1, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "'nowhere' is no node");
    const char *gnd[] = {"0"};
    ss_error err2 = {0};
    assert_int_equal(ss_solver_select_nodes(ss_test_sv(ckt), gnd, 1, &err2), SS_ERR_INPUT);
    ss_assert_contains(err2.message, "ground");
    ss_test_destroy(&ckt);
}

static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *t = malloc((size_t)n + 1);
    assert_non_null(t);
    assert_int_equal(fread(t, 1, (size_t)n, f), (size_t)n);
    fclose(f);
    *len = (size_t)n;
    return t;
}

/* ss_ac_sweep_write streams ac.csv (on a second thread above 1e5 values): the very bytes of
 * ss_table_write_csv of ss_ac_sweep_run's table, small (one thread) and large (two), with a
 * node selection too. */
static void test_ac_stream_matches_table(void **state)
{
    (void)state;
    const char *base = getenv("TMPDIR");
    char dir[512], a[600], b[600];
    snprintf(dir, sizeof dir, "%s/stagesim_ac_XXXXXX", base && base[0] ? base : P_tmpdir);
    assert_non_null(mkdtemp(dir));
    snprintf(a, sizeof a, "%s/table.csv", dir);
    snprintf(b, sizeof b, "%s/stream.csv", dir);
    for (int sections = 4; sections <= 3000; sections *= 750) {
        char *text = malloc((size_t)sections * 64 + 256);
        int len = sprintf(text, "ladder\nvin n0 0 ac 1 30\n");
        for (int i = 0; i < sections; i++)
            len += sprintf(text + len, "r%d n%d n%d 1k\nc%d n%d 0 10n\n", i, i, i + 1, i,
                           i + 1);
        sprintf(text + len, ".ac dec 20 10 1meg\n");
        ss_circuit *ckt = ss_test_parse(text);
        free(text);
        for (int sel = 0; sel < 2; sel++) {
            const char *names[] = {"n3", "n1"};
            ss_error err = {0};
            assert_int_equal(ss_solver_select_nodes(ss_test_sv(ckt), names, sel ? 2 : 0, &err), SS_OK);
            ss_table *ac = NULL;
            assert_int_equal(ss_ac_sweep_run(ss_test_sv(ckt), &ac, &err), SS_OK);
            assert_int_equal(ss_table_write_csv(ac, a, &err), SS_OK);
            ss_table_destroy(&ac);
            assert_int_equal(ss_ac_sweep_write(ss_test_sv(ckt), b, &err), SS_OK);
            size_t la, lb;
            char *ta = slurp(a, &la), *tb = slurp(b, &lb);
            assert_int_equal(la, lb);
            assert_memory_equal(ta, tb, la);
            free(ta);
            free(tb);
        }
        ss_test_destroy(&ckt);
    }
    unlink(a);
    unlink(b);
    rmdir(dir);
}

static void test_stage_without_stage_is_error(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("nostage\nvin in 0 ac 1\nr1 in 0 1k\n.ac dec 1 1 10\n");
    ss_table *st = NULL, *sum = NULL;
    ss_error err = {0};
    assert_int_equal(ss_stage_run(ss_test_sv(ckt), &st, &sum, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "no stage named");
    assert_int_equal(ss_solver_set_stage(ss_test_sv(ckt), "vin", "nonode", &err), SS_ERR_INPUT);
    ss_test_destroy(&ckt);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_rc_lowpass_corner),
        cmocka_unit_test(test_rc_highpass_corner_and_phase),
        cmocka_unit_test(test_series_rlc_resonance),
        cmocka_unit_test(test_ac_table_columns),
        cmocka_unit_test(test_ac_node_selection),
        cmocka_unit_test(test_ac_stream_matches_table),
        cmocka_unit_test(test_stage_without_stage_is_error),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
