/* refine's yield (src/design/search.c, docs/refine.md "Yield") on a resistive divider whose
 * yield is a closed form: 12 V +-10 % (uniform) over R1 (top) and R2 (bottom); v(mid) =
 * V R2 / (R1 + R2) and the supply current V / (R1 + R2) (Ohm's and Kirchhoff's laws), so a
 * design passes for V within an interval and its yield is that interval's share of
 * 10.8 .. 13.2 V. The chosen design's Monte Carlo yield must match the closed form within four
 * binomial standard errors; the Wilson interval must match its closed form (E. B. Wilson,
 * J. Am. Stat. Assoc. 22 (1927) 209-212); the options' ranges are checked. */
#define _POSIX_C_SOURCE 200809L
#include <stdlib.h>
#include <unistd.h>

#include "ss_test.h"
#include "util/util.h"

static char g_dir[64];

static const char DIVIDER[] =
    "divider with two free values and a loose supply\n"
    "V1 top 0 DC 12\n"
    "R1 top mid 47k\n"
    "R2 mid 0 4.7k\n"
    ".choose R1 E12 1k..100k\n"
    ".choose r2 E12 1k..100k\n"
    ".expect v(mid) 3.8 .. 4.2\n"
    ".expect i(v1) -1.5m .. -0.5m\n"
    ".op\n";

/* The exact yield of (r1, r2) for V uniform in 10.8 .. 13.2. */
static double exact_yield(double r1, double r2)
{
    double a = r2 / (r1 + r2);
    double lo = fmax(fmax(3.8 / a, 0.5e-3 * (r1 + r2)), 10.8);
    double hi = fmin(fmin(4.2 / a, 1.5e-3 * (r1 + r2)), 13.2);
    return hi > lo ? (hi - lo) / 2.4 : 0.0;
}

static void test_divider_yield(void **state)
{
    (void)state;
    char path[128];
    snprintf(path, sizeof path, "%s/divider.cir", g_dir);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs(DIVIDER, f);
    fclose(f);
    ss_error err = {0};
    ss_refine *r = NULL;
    assert_int_equal(ss_refine_create(path, NULL, 0, &r, &err), SS_OK);
    assert_int_equal(ss_refine_add_tolerance(r, "v1=10%", &err), SS_OK);
    assert_int_equal(ss_refine_set_trials(r, 0, 1, &err), SS_ERR_INPUT);
    assert_int_equal(ss_refine_set_min_yield(r, 1.5, &err), SS_ERR_INPUT);
    long n = 2000;
    assert_int_equal(ss_refine_set_trials(r, n, 5, &err), SS_OK);
    assert_int_equal(ss_refine_set_threads(r, 2, &err), SS_OK);
    assert_int_equal(ss_refine_run(r, &err), SS_OK);
    ss_refine_stats s;
    ss_refine_get_stats(r, &s);
    assert_int_equal(s.trials, n);
    assert_true(s.mc_candidates >= 1);
    ss_table *design = NULL, *margins = NULL, *path_t = NULL, *yield = NULL;
    assert_int_equal(ss_refine_tables(r, &design, &margins, &path_t, &err), SS_OK);
    int c_ch = ss_table_col_index(design, "chosen");
    double r1 = ss_table_get(design, 0, c_ch), r2 = ss_table_get(design, 1, c_ch);
    double p = exact_yield(r1, r2);
    double se = sqrt(fmax(p * (1.0 - p), 1.0 / (double)n) / (double)n);
    assert_true(fabs(s.yield - p) <= 4.0 * se);
    assert_int_equal(ss_refine_yield_table(r, &yield, &err), SS_OK);
    assert_string_equal(ss_table_row_label(yield, 0), "all_limits");
    assert_true(fabs(ss_table_get(yield, 0, ss_table_col_index(yield, "pass_fraction")) -
                     s.yield) < 1e-15);
    ss_table_destroy(&design);
    ss_table_destroy(&margins);
    ss_table_destroy(&path_t);
    ss_table_destroy(&yield);
    ss_refine_destroy(&r);
}

static void test_wilson(void **state)
{
    (void)state;
    const double z = 1.959963984540054;
    double lo, hi;
    /* k = n: lower bound n / (n + z^2), upper 1 */
    ss_wilson_interval(200, 200, z, &lo, &hi);
    assert_true(fabs(lo - 200.0 / (200.0 + z * z)) < 1e-14 && hi == 1.0);
    /* k = 0: 0 .. z^2 / (n + z^2) */
    ss_wilson_interval(0, 10, z, &lo, &hi);
    assert_true(lo == 0.0 && fabs(hi - z * z / (10.0 + z * z)) < 1e-14);
    /* k = n / 2: symmetric about 1/2 */
    ss_wilson_interval(50, 100, z, &lo, &hi);
    assert_true(fabs((lo + hi) - 1.0) < 1e-14 && lo < 0.5 && hi > 0.5);
}

int main(void)
{
    snprintf(g_dir, sizeof g_dir, "/tmp/ss_refine_yield_XXXXXX");
    if (!mkdtemp(g_dir))
        return 1;
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_divider_yield),
        cmocka_unit_test(test_wilson),
    };
    int rc = cmocka_run_group_tests(tests, NULL, NULL);
    char cmd[128];
    snprintf(cmd, sizeof cmd, "rm -rf %s", g_dir);
    if (system(cmd) != 0)
        rc = rc ? rc : 1;
    return rc;
}
