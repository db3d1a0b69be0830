/* refine (src/design/search.c) on a resistive divider whose answer is a closed form: 12 V over
 * R1 (top) and R2 (bottom), v(mid) = 12 R2 / (R1 + R2) by Ohm's and Kirchhoff's laws, the
 * supply current 12 / (R1 + R2). The chosen values must be series members within their ranges,
 * meet the limits, and be a local optimum of the documented neighbourhood (docs/refine.md:
 * every value one step, then every pair one step each) for the documented objective, computed
 * here from the closed form. Also: the .choose errors name their file and line, and the chosen
 * netlist differs from the input only in the value tokens. */
#define _POSIX_C_SOURCE 200809L
#include <stdlib.h>
#include <unistd.h>

#include "ss_test.h"
#include "util/util.h"

static char g_dir[64];

static void write_file(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

static char *read_all(const char *path)
{
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *t = malloc((size_t)n + 1);
    assert_non_null(t);
    size_t got = fread(t, 1, (size_t)n, f);
    t[got] = '\0';
    fclose(f);
    return t;
}

static const char DIVIDER[] =
    "divider with two free values\n"
    "V1 top 0 DC 12\n"
    "R1 top mid 47k   ; top\n"
    "R2 mid 0 4.7k\n"
    ".choose R1 E12 1k..100k\n"
    ".choose r2 E12 1k..100k\n"
    ".expect v(mid) 3.8 .. 4.2\n"
    ".expect i(v1) -1.5m .. -0.5m\n"
    ".op\n";

/* The documented normalised margins of the divider's two limits (both plain, not dB). */
static void margins(double r1, double r2, double m[2])
{
    double v = 12.0 * r2 / (r1 + r2), i = -12.0 / (r1 + r2);
    m[0] = fmin((v - 3.8) / 3.8, (4.2 - v) / 4.2);
    m[1] = fmin((i - -1.5e-3) / 1.5e-3, (-0.5e-3 - i) / 0.5e-3);
}

static double objective(double r1, double r2)
{
    double m[2];
    margins(r1, r2, m);
    return fmin(m[0], m[1]) + 1e-3 * (fmin(m[0], 1.0) + fmin(m[1], 1.0)) / 2.0;
}

static void test_divider(void **state)
{
    (void)state;
    char path[128], out[160];
    snprintf(path, sizeof path, "%s/divider.cir", g_dir);
    snprintf(out, sizeof out, "%s/chosen.cir", g_dir);
    write_file(path, DIVIDER);
    ss_refine *r = NULL;
    ss_error err = {0};
    assert_int_equal(ss_refine_create(path, NULL, 0, &r, &err), SS_OK);
    assert_int_equal(ss_refine_set_threads(r, 2, &err), SS_OK);
    assert_int_equal(ss_refine_run(r, &err), SS_OK);
    ss_refine_stats s;
    ss_refine_get_stats(r, &s);
    assert_int_equal(s.n_free, 2);
    assert_int_equal(s.n_corners, 1);
    assert_int_equal(s.feasible, 1);
    assert_null(ss_refine_binding(r, 0));
    ss_table *d = NULL, *m = NULL, *p = NULL;
    assert_int_equal(ss_refine_tables(r, &d, &m, &p, &err), SS_OK);
    double r1 = ss_table_lookup(d, "r1", ss_table_col_index(d, "chosen"));
    double r2 = ss_table_lookup(d, "r2", ss_table_col_index(d, "chosen"));
    /* members of E12 within the ranges */
    long k1, k2;
    double back;
    assert_int_equal(ss_eseries_index(12, r1, &k1, &err), SS_OK);
    assert_int_equal(ss_eseries_index(12, r2, &k2, &err), SS_OK);
    assert_int_equal(ss_eseries_value(12, k1, &back, &err), SS_OK);
    ss_assert_close(back, r1, 0.0, 0.0);
    assert_int_equal(ss_eseries_value(12, k2, &back, &err), SS_OK);
    ss_assert_close(back, r2, 0.0, 0.0);
    assert_true(r1 >= 1e3 && r1 <= 1e5 && r2 >= 1e3 && r2 <= 1e5);
    /* the margins table: the closed form's margins */
    double mc[2];
    margins(r1, r2, mc);
    ss_assert_close(ss_table_lookup(m, "v(mid)", ss_table_col_index(m, "margin_nominal")), mc[0],
                    1e-6, 1e-9);
    ss_assert_close(ss_table_lookup(m, "i(v1)", ss_table_col_index(m, "margin_nominal")), mc[1],
                    1e-6, 1e-9);
    /* a local optimum: no neighbour (one step of one value, or of both) is better */
    double f = objective(r1, r2);
    for (int a = -1; a <= 1; a++)
        for (int b = -1; b <= 1; b++) {
            double n1, n2;
            assert_int_equal(ss_eseries_value(12, k1 + a, &n1, &err), SS_OK);
            assert_int_equal(ss_eseries_value(12, k2 + b, &n2, &err), SS_OK);
            if (n1 < 1e3 || n1 > 1e5 || n2 < 1e3 || n2 > 1e5)
                continue;
            if (objective(n1, n2) > f + 1e-9)
                fail_msg("neighbour R1=%g R2=%g (objective %.6g) beats the chosen R1=%g R2=%g "
                         "(%.6g)",
                         n1, n2, objective(n1, n2), r1, r2, f);
        }
    /* the chosen netlist: only the two value tokens differ */
    assert_int_equal(ss_refine_write_netlist(r, out, &err), SS_OK);
    char *text = read_all(out);
    char expect[1024];
    char v1[32], v2[32];
    snprintf(v1, sizeof v1, "%gk", r1 / 1e3);
    snprintf(v2, sizeof v2, "%gk", r2 / 1e3);
    snprintf(expect, sizeof expect,
             "divider with two free values\n"
             "V1 top 0 DC 12\n"
             "R1 top mid %s   ; top\n"
             "R2 mid 0 %s\n"
             ".choose R1 E12 1k..100k\n"
             ".choose r2 E12 1k..100k\n"
             ".expect v(mid) 3.8 .. 4.2\n"
             ".expect i(v1) -1.5m .. -0.5m\n"
             ".op\n",
             v1, v2);
    assert_string_equal(text, expect);
    free(text);
    ss_table_destroy(&d);
    ss_table_destroy(&m);
    ss_table_destroy(&p);
    ss_refine_destroy(&r);
}

/* Each bad .choose line: SS_ERR_INPUT naming the file and the .choose line. */
static void test_choose_errors(void **state)
{
    (void)state;
    static const struct {
        const char *line;
        const char *says;
    } cases[] = {
        {".choose R9 E24 1k..10k", "no element or .param of that name"},
        {".choose R1 E25 1k..10k", "unknown series 'e25'"},
        {".choose R1 E24 10k..1k", "is empty"},
        {".choose R1 E24 4.8k..4.9k", "no E24 value lies within"},
        {".choose R1 E24 1k", "must be written LO..HI"},
        {".choose R1 E24", "needs NAME SERIES LO..HI"},
        {".choose R1 E24 1k..10k extra", "needs NAME SERIES LO..HI"},
        {".choose V1 E24 1..100", "plain number"},
    };
    char path[128];
    snprintf(path, sizeof path, "%s/bad.cir", g_dir);
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char text[512];
        snprintf(text, sizeof text,
                 "bad choice\nV1 top 0 DC 12\nR1 top mid 47k\nR2 mid 0 4.7k\n%s\n"
                 ".expect v(mid) 3.8 .. 4.2\n.op\n",
                 cases[i].line);
        write_file(path, text);
        ss_refine *r = NULL;
        ss_error err = {0};
        assert_int_equal(ss_refine_create(path, NULL, 0, &r, &err), SS_ERR_INPUT);
        assert_null(r);
        if (!strstr(err.message, cases[i].says) || err.line != 5 || !strstr(err.file, "bad.cir"))
            fail_msg("%s: got %s:%d: %s", cases[i].line, err.file, err.line, err.message);
    }
    /* no .choose at all */
    write_file(path, "none\nV1 a 0 DC 1\nR1 a 0 1k\n.op\n");
    ss_refine *r = NULL;
    ss_error err = {0};
    assert_int_equal(ss_refine_create(path, NULL, 0, &r, &err), SS_ERR_INPUT);
    assert_non_null(strstr(err.message, "no free value"));
}

/* Allocation N failing, N = 0, 1, 2, ... until the whole refine succeeds: every failing run
 * ends in a clean error (the sanitizer build checks for leaks). One thread, a small budget. */
static ss_status alloc_run_once(const char *path, const char *out)
{
    ss_refine *r = NULL;
    ss_error err = {0};
    ss_table *d = NULL, *m = NULL, *p = NULL;
    ss_status st = ss_refine_create(path, NULL, 0, &r, &err);
    if (st == SS_OK)
        st = ss_refine_set_threads(r, 1, &err);
    if (st == SS_OK)
        st = ss_refine_set_budget(r, 40, &err);
    if (st == SS_OK)
        st = ss_refine_set_temps(r, -20.0, 70.0, &err);
    if (st == SS_OK)
        st = ss_refine_run(r, &err);
    if (st == SS_OK)
        st = ss_refine_tables(r, &d, &m, &p, &err);
    if (st == SS_OK)
        st = ss_refine_write_netlist(r, out, &err);
    if (st != SS_OK) {
        assert_true(err.code != SS_OK);
        assert_true(err.message[0] != '\0');
    }
    ss_table_destroy(&d);
    ss_table_destroy(&m);
    ss_table_destroy(&p);
    ss_refine_destroy(&r);
    return st;
}

static void test_allocation_failures(void **state)
{
    (void)state;
    char path[128], out[160];
    snprintf(path, sizeof path, "%s/alloc.cir", g_dir);
    snprintf(out, sizeof out, "%s/alloc_out.cir", g_dir);
    write_file(path, DIVIDER);
    long n;
    int nomem_seen = 0;
    for (n = 0; n < 100000; n++) {
        ss_alloc_fail_at(n);
        ss_status s = alloc_run_once(path, out);
        if (s == SS_OK)
            break;
        nomem_seen += s == SS_ERR_NOMEM;
    }
    ss_alloc_fail_at(-1);
    assert_true(n > 10);
    assert_true(nomem_seen > 0);
    print_message("refine allocation sweep: %ld failure points, all clean\n", n);
}

int main(void)
{
    snprintf(g_dir, sizeof g_dir, "/tmp/ss_refine_XXXXXX");
    if (!mkdtemp(g_dir))
        return 1;
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_divider),
        cmocka_unit_test(test_choose_errors),
        cmocka_unit_test(test_allocation_failures),
    };
    int rc = cmocka_run_group_tests(tests, NULL, NULL);
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf %s", g_dir);
    if (system(cmd) != 0)
        rc = rc ? rc : 1;
    return rc;
}
