/* The number of frequencies of an .ac sweep: the parser's limit check and the sweep's own
 * frequency list count alike, so a sweep the parser accepts is one the sweep can run, and the
 * parser refuses at the .ac line what the sweep would refuse later.
 *
 * Expected counts are closed forms, not the library's arithmetic: a logarithmic sweep with N
 * points per decade (per octave) from f1 to f1 * 10^k (f1 * 2^k) has N k + 1 frequencies, both
 * ends included; a linear sweep of N points has N (common practice; docs/netlist.md, `.ac`).
 * The spans below are whole decades or octaves whose logarithms round just below the whole
 * number in double precision (log10(600) - log10(6) = 1.9999999999999998...), which is where
 * a count without a rounding allowance falls one short. */
#include "ss_test.h"

#include "analysis/analysis.h"

typedef struct ac_case {
    const char *line; /* the .ac line */
    double expected;  /* N k + 1 (log) or N (lin), in exact arithmetic */
} ac_case;

static const ac_case CASES[] = {
    /* over the limit of 1e6 by one: refused at the .ac line */
    {".ac dec 500000 6 600", 500000.0 * 2 + 1},
    {".ac dec 1000000 5 50", 1000000.0 * 1 + 1},
    {".ac dec 250000 47 470000", 250000.0 * 4 + 1},
    {".ac oct 500000 2 8", 500000.0 * 2 + 1},
    {".ac oct 100000 3 3072", 100000.0 * 10 + 1},
    {".ac dec 1000000 1 10", 1000000.0 * 1 + 1},
    /* exactly at the limit: accepted, and the sweep has that many frequencies */
    {".ac dec 999999 5 50", 999999.0 * 1 + 1},
    {".ac dec 333333 33 33000", 333333.0 * 3 + 1},
    {".ac oct 999999 4 8", 999999.0 * 1 + 1},
    {".ac dec 111111 1 1g", 111111.0 * 9 + 1},
    {".ac lin 1000000 1 2", 1000000.0},
    /* ordinary sweeps */
    {".ac dec 10 5 50", 10.0 * 1 + 1},
    {".ac dec 20 1 10meg", 20.0 * 7 + 1},
    {".ac oct 3 4 64", 3.0 * 4 + 1},
    {".ac lin 3 10 30", 3.0},
};

static void check_case(const ac_case *c)
{
    char text[256];
    snprintf(text, sizeof text, "ac count\nv1 in 0 dc 0 ac 1\nr1 in out 1k\nc1 out 0 1n\n%s\n",
             c->line);
    ss_circuit *ckt = NULL;
    ss_error err;
    memset(&err, 0, sizeof err);
    ss_status st = ss_circuit_parse_text(text, strlen(text), "ac.cir", NULL, 0, &ckt, &err);
    print_message("%s: expected %.0f frequencies; parse: %s %s\n", c->line, c->expected,
                  ss_status_name(st), err.message);
    if (c->expected > AC_MAX_POINTS) {
        assert_int_equal(st, SS_ERR_LIMIT);
        assert_int_equal(err.line, 5);
        assert_string_equal(err.message,
                            ".ac: 1e+06 frequencies in all, more than the limit of 1e6");
        assert_null(ckt);
        return;
    }
    assert_int_equal(st, SS_OK);
    double *freqs = NULL;
    int n = 0;
    assert_int_equal(ac_frequencies(ss_test_sv(ckt), &freqs, &n, &err), SS_OK);
    assert_int_equal(n, (int)c->expected);
    ss_free(freqs);
    ss_test_destroy(&ckt);
}

static void test_parser_and_sweep_count_alike(void **state)
{
    (void)state;
    for (size_t i = 0; i < sizeof CASES / sizeof CASES[0]; i++)
        check_case(&CASES[i]);
}

/* ac_point_count itself, on the same closed forms. */
static void test_point_count_closed_forms(void **state)
{
    (void)state;
    assert_true(ac_point_count(AC_DEC, 500000, 6.0, 600.0) == 1000001.0);
    assert_true(ac_point_count(AC_OCT, 500000, 2.0, 8.0) == 1000001.0);
    assert_true(ac_point_count(AC_DEC, 999999, 5.0, 50.0) == 1000000.0);
    assert_true(ac_point_count(AC_DEC, 10, 1.0, 1000.0) == 31.0);
    assert_true(ac_point_count(AC_LIN, 7, 1.0, 1000.0) == 7.0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_parser_and_sweep_count_alike),
        cmocka_unit_test(test_point_count_closed_forms),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
