/* The IEC 60063 preferred-number tables (IEC 60063:2015, "Preferred number series for
 * resistors and capacitors"): each series' count, every member within the standard's rounding
 * of the geometric value 10^(i/N), each coarser series a subset of the next finer one of its
 * family (E6 < E12 < E24; E48 < E96 < E192), and snapping to the nearest member. */
#include <math.h>

#include "ss_test.h"
#include "stagesim/refine.h"
#include "study/study.h"

static void test_counts_and_rounding(void **state)
{
    (void)state;
    static const int series[] = {6, 12, 24, 48, 96, 192};
    for (size_t k = 0; k < sizeof series / sizeof series[0]; k++) {
        const int *tab;
        double scale;
        int n = eseries_table(series[k], &tab, &scale);
        assert_int_equal(n, series[k]);
        for (int i = 0; i < n; i++) {
            double ideal = scale * pow(10.0, (double)i / n);
            /* E48..E192 are 10^(i/N) rounded to three digits (one exception, 920 for 919.0..
             * of E192, is the standard's own); E6..E24 keep their historical two-digit values,
             * which differ from the ideal by up to 1.4 (27 for 26.1, 30 for 28.7, 33 for
             * 31.6, 47 for 46.4 — the standard prints them so). */
            double tol = n >= 48 ? 0.5 + (n == 192 && tab[i] == 920 ? 1.0 : 0.0) : 1.5;
            if (fabs(tab[i] - ideal) > tol)
                fail_msg("E%d[%d] = %d, ideal %.3f", n, i, tab[i], ideal);
            if (i > 0)
                assert_true(tab[i] > tab[i - 1]);
        }
    }
}

static int member(int series, int v, double vscale)
{
    const int *tab;
    double scale;
    int n = eseries_table(series, &tab, &scale);
    for (int i = 0; i < n; i++)
        if (fabs(tab[i] / scale - v / vscale) < 1e-12)
            return 1;
    return 0;
}

static void test_families_nest(void **state)
{
    (void)state;
    static const int pairs[][2] = {{6, 12}, {12, 24}, {48, 96}, {96, 192}};
    for (size_t k = 0; k < sizeof pairs / sizeof pairs[0]; k++) {
        const int *tab;
        double scale;
        int n = eseries_table(pairs[k][0], &tab, &scale);
        for (int i = 0; i < n; i++)
            if (!member(pairs[k][1], tab[i], scale))
                fail_msg("E%d member %d not in E%d", pairs[k][0], tab[i], pairs[k][1]);
    }
    /* the one E192 value that is not the rounded geometric value */
    assert_true(member(192, 920, 100.0));
    assert_false(member(192, 919, 100.0));
}

static void test_nearest(void **state)
{
    (void)state;
    ss_error err = {0};
    double v;
    assert_int_equal(ss_eseries_nearest(6, 3900.0, &v, &err), SS_OK);
    ss_assert_close(v, 3300.0, 1e-12, 0.0); /* 3.9k: ln(3.9/3.3)=0.167 < ln(4.7/3.9)=0.187 */
    assert_int_equal(ss_eseries_nearest(48, 1290.0, &v, &err), SS_OK);
    ss_assert_close(v, 1270.0, 1e-12, 0.0); /* E48 has 121, 127, 133: 1.29k is nearer 1.27k */
    assert_int_equal(ss_eseries_nearest(192, 9.2e-9, &v, &err), SS_OK);
    ss_assert_close(v, 9.2e-9, 1e-12, 0.0);
    assert_int_equal(ss_eseries_nearest(192, 99.0, &v, &err), SS_OK);
    ss_assert_close(v, 98.8, 1e-12, 0.0);
    assert_int_equal(ss_eseries_nearest(36, 1.0, &v, &err), SS_ERR_INPUT);
}

/* The series as a lattice: index 0 is 1, index N is 10, each step one member up; the index of
 * a member gives it back; stepping from the nearest member of any value lands on the members
 * either side (IEC 60063 values written out: E24 around 4.7k is 4.3k, 4.7k, 5.1k). */
static void test_lattice_steps(void **state)
{
    (void)state;
    ss_error err = {0};
    static const int series[] = {6, 12, 24, 48, 96, 192};
    for (size_t s = 0; s < sizeof series / sizeof series[0]; s++) {
        int n = series[s];
        double v;
        assert_int_equal(ss_eseries_value(n, 0, &v, &err), SS_OK);
        ss_assert_close(v, 1.0, 0.0, 0.0);
        assert_int_equal(ss_eseries_value(n, n, &v, &err), SS_OK);
        ss_assert_close(v, 10.0, 0.0, 0.0);
        assert_int_equal(ss_eseries_value(n, -n, &v, &err), SS_OK);
        ss_assert_close(v, 0.1, 0.0, 0.0);
        /* over eight decades, every index round-trips and every step goes up */
        double prev = 0.0;
        for (long k = -4L * n; k <= 4L * n; k++) {
            long back;
            assert_int_equal(ss_eseries_value(n, k, &v, &err), SS_OK);
            assert_int_equal(ss_eseries_index(n, v, &back, &err), SS_OK);
            if (back != k)
                fail_msg("E%d: index %ld gives %.17g whose index is %ld", n, k, v, back);
            assert_true(v > prev);
            prev = v;
            /* the same value as snapping gives */
            double snapped;
            assert_int_equal(ss_eseries_nearest(n, v * 1.001, &snapped, &err), SS_OK);
            ss_assert_close(snapped, v, 0.0, 0.0);
        }
    }
    /* the neighbours of 4.7k in E24 and of 10n in E6 */
    long k;
    double lo, hi;
    assert_int_equal(ss_eseries_index(24, 4700.0, &k, &err), SS_OK);
    assert_int_equal(ss_eseries_value(24, k - 1, &lo, &err), SS_OK);
    assert_int_equal(ss_eseries_value(24, k + 1, &hi, &err), SS_OK);
    ss_assert_close(lo, 4300.0, 0.0, 0.0);
    ss_assert_close(hi, 5100.0, 0.0, 0.0);
    assert_int_equal(ss_eseries_index(6, 10e-9, &k, &err), SS_OK);
    assert_int_equal(ss_eseries_value(6, k - 1, &lo, &err), SS_OK);
    assert_int_equal(ss_eseries_value(6, k + 1, &hi, &err), SS_OK);
    ss_assert_close(lo, 6.8e-9, 0.0, 0.0);
    ss_assert_close(hi, 15e-9, 0.0, 0.0);
    /* across a decade: E12 below 1k is 820, above 8.2k is 10k */
    assert_int_equal(ss_eseries_index(12, 1000.0, &k, &err), SS_OK);
    assert_int_equal(ss_eseries_value(12, k - 1, &lo, &err), SS_OK);
    ss_assert_close(lo, 820.0, 0.0, 0.0);
    assert_int_equal(ss_eseries_index(12, 8200.0, &k, &err), SS_OK);
    assert_int_equal(ss_eseries_value(12, k + 1, &hi, &err), SS_OK);
    ss_assert_close(hi, 10000.0, 0.0, 0.0);
    /* a value between members: the nearer on a log scale (E24: 2.2k and 2.4k, 2.29k nearer
     * 2.2k since ln(2.29/2.2) = 0.040 < ln(2.4/2.29) = 0.047) */
    assert_int_equal(ss_eseries_index(24, 2290.0, &k, &err), SS_OK);
    assert_int_equal(ss_eseries_value(24, k, &lo, &err), SS_OK);
    ss_assert_close(lo, 2200.0, 0.0, 0.0);
    /* refused: unknown series, a value not positive, an index out of 1e-30 .. 1e30 */
    assert_int_equal(ss_eseries_index(36, 1.0, &k, &err), SS_ERR_INPUT);
    assert_int_equal(ss_eseries_index(24, 0.0, &k, &err), SS_ERR_INPUT);
    assert_int_equal(ss_eseries_index(24, -5.0, &k, &err), SS_ERR_INPUT);
    assert_int_equal(ss_eseries_value(24, 24 * 31, &lo, &err), SS_ERR_INPUT);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_counts_and_rounding),
        cmocka_unit_test(test_families_nest),
        cmocka_unit_test(test_nearest),
        cmocka_unit_test(test_lattice_steps),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
