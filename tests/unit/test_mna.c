/* MNA storage and KLU wrappers: pattern assembly with merged duplicates, real and complex
 * solves, refactor reuse, singular reporting. */
#include "ss_test.h"

#include "mna/mna.h"

/* KLU check value: A = [[2,1],[1,3]], b = [3,4] -> x = [1,1], rcond = 0.833333 (the KLU
 * call sequence run on Debian 12, as recorded in the project's solver notes). */
static void test_klu_2x2_check_value(void **state)
{
    (void)state;
    mna *m = mna_create(2);
    int c00 = mna_claim(m, 0, 0), c01 = mna_claim(m, 0, 1), c10 = mna_claim(m, 1, 0);
    int c11 = mna_claim(m, 1, 1), dup = mna_claim(m, 0, 0);
    assert_int_equal(mna_claim(m, -1, 0), -1); /* ground row dropped */
    int bad;
    assert_int_equal(mna_finalize(m, &bad), SS_OK);
    assert_int_equal(mna_nnz(m), 4);
    assert_int_equal(mna_slot(m, c00), mna_slot(m, dup));
    double *A = mna_values(m);
    A[mna_slot(m, c00)] = 1.5;
    A[mna_slot(m, dup)] += 0.5;
    A[mna_slot(m, c01)] = 1.0;
    A[mna_slot(m, c10)] = 1.0;
    A[mna_slot(m, c11)] = 3.0;
    double b[2] = {3.0, 4.0}, rcond;
    assert_int_equal(mna_solve_real(m, b, &bad, &rcond), SS_OK);
    ss_assert_close(b[0], 1.0, 1e-14, 0);
    ss_assert_close(b[1], 1.0, 1e-14, 0);
    ss_assert_close(rcond, 0.833333, 1e-6, 0);
    /* new values on the same pattern go through klu_refactor */
    A[mna_slot(m, c00)] = 4.0;
    double b2[2] = {5.0, 4.0};
    assert_int_equal(mna_solve_real(m, b2, &bad, &rcond), SS_OK);
    ss_assert_close(b2[0], 1.0, 1e-14, 0);
    ss_assert_close(b2[1], 1.0, 1e-14, 0);
    mna_destroy(&m);
    assert_null(m);
}

static void test_complex_solve(void **state)
{
    (void)state;
    mna *m = mna_create(2);
    int c[4] = {mna_claim(m, 0, 0), mna_claim(m, 0, 1), mna_claim(m, 1, 0), mna_claim(m, 1, 1)};
    int bad;
    assert_int_equal(mna_finalize(m, &bad), SS_OK);
    double complex *A = mna_zvalues(m);
    /* [[1+j, 2], [0, 1-j]] x = [1, 1] */
    A[mna_slot(m, c[0])] = 1.0 + 1.0 * (double complex)I;
    A[mna_slot(m, c[1])] = 2.0;
    A[mna_slot(m, c[2])] = 0.0;
    A[mna_slot(m, c[3])] = 1.0 - 1.0 * (double complex)I;
    double complex b[2] = {1.0, 1.0};
    double rcond;
    assert_int_equal(mna_solve_complex(m, b, &bad, &rcond), SS_OK);
    double complex x1 = 1.0 / (1.0 - (double complex)I);
    double complex x0 = (1.0 - 2.0 * x1) / (1.0 + (double complex)I);
    ss_assert_close(creal(b[0]), creal(x0), 1e-14, 1e-15);
    ss_assert_close(cimag(b[0]), cimag(x0), 1e-14, 1e-15);
    ss_assert_close(creal(b[1]), creal(x1), 1e-14, 1e-15);
    ss_assert_close(cimag(b[1]), cimag(x1), 1e-14, 1e-15);
    mna_destroy(&m);
}

static void test_singular_reports_column(void **state)
{
    (void)state;
    mna *m = mna_create(2);
    int c00 = mna_claim(m, 0, 0);
    mna_claim(m, 1, 1);
    int bad;
    assert_int_equal(mna_finalize(m, &bad), SS_OK);
    double *A = mna_values(m);
    A[mna_slot(m, c00)] = 1.0; /* unknown 1 has an all-zero row and column */
    double b[2] = {1.0, 1.0};
    assert_int_equal(mna_solve_real(m, b, &bad, NULL), SS_ERR_SINGULAR);
    assert_int_equal(bad, 1);
    mna_destroy(&m);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_klu_2x2_check_value),
        cmocka_unit_test(test_complex_solve),
        cmocka_unit_test(test_singular_reports_column),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
