/* The sanity checks (src/analysis/lint.c) through the library: the SI suffix each value token
 * carries, which small capacitors lie in series with the stage's signal path (small networks
 * whose answer follows from their drawing), repeat runs, and a clean error at every failing
 * allocation. */
#include "ss_test.h"

#include "netlist/netlist.h"
#include "util/util.h"

static void test_value_si_exp(void **state)
{
    (void)state;
    static const struct {
        const char *tok;
        int exp10;
    } cases[] = {{"68m", -3},   {"0.068m", -3}, {"68mohm", -3}, {"1meg", 6},  {"1megohm", 6},
                 {"1f", -15},   {"1farad", -15}, {"10uf", -6},  {"100p", -12}, {"4.7kohm", 3},
                 {"2t", 12},    {"1g", 9},      {"3n", -9},     {"1mil", 0},  {"47", 0},
                 {"1e-3", 0},   {"{x}", 0},     {"m", 0},       {"", 0}};
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        if (value_si_exp(cases[i].tok) != cases[i].exp10) {
            print_error("value_si_exp(\"%s\") = %d, expected %d\n", cases[i].tok,
                        value_si_exp(cases[i].tok), cases[i].exp10);
            fail();
        }
    }
}

/* Runs the lint on text and returns a comma-separated list "check subject,..." in buf. */
static int lint_text(const char *text, char *buf, size_t len)
{
    ss_circuit *ckt = NULL;
    ss_table *op = ss_test_op(text, &ckt);
    ss_error err = {0};
    int n = -1;
    assert_int_equal(ss_lint_run(ss_test_sv(ckt), &n, &err), SS_OK);
    buf[0] = '\0';
    int listed = 0;
    for (int i = 0; ss_solver_warning(ss_test_sv(ckt), i); i++) {
        const char *subject = NULL;
        const char *check = ss_solver_warning_lint(ss_test_sv(ckt), i, &subject);
        if (!check)
            continue;
        snprintf(buf + strlen(buf), len - strlen(buf), "%s%s %s", listed++ ? "," : "", check,
                 subject);
    }
    assert_int_equal(listed, n);
    /* a second run finds the same and adds nothing */
    int n2 = -1;
    assert_int_equal(ss_lint_run(ss_test_sv(ckt), &n2, &err), SS_OK);
    assert_int_equal(n2, n);
    assert_null(ss_solver_warning_lint(ss_test_sv(ckt), -1, NULL));
    assert_null(ss_solver_warning_lint(ss_test_sv(ckt), 1000, NULL));
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
    return n;
}

#define EXPECT_LINT(text, expected)                                                           \
    do {                                                                                       \
        char got_[1024];                                                                       \
        lint_text((text), got_, sizeof got_);                                                  \
        if (strcmp(got_, (expected)) != 0) {                                                   \
            print_error("lint found '%s', expected '%s'\n", got_, (expected));                \
            fail();                                                                            \
        }                                                                                      \
    } while (0)

static void test_series_capacitor(void **state)
{
    (void)state;
    /* the only way from the source to the output */
    EXPECT_LINT("t\nvin in 0 dc 0 ac 1\nc1 in out 0.5p\nrl out 0 1k\n.stage in=vin out=out\n",
                "coupling_cap_tiny c1");
    /* a resistor beside it is another way: not in series */
    EXPECT_LINT("t\nvin in 0 dc 0 ac 1\nc1 in out 0.5p\nrp in out 1meg\nrl out 0 1k\n"
                ".stage in=vin out=out\n",
                "");
    /* two in a row: each is on every path */
    EXPECT_LINT("t\nvin in 0 dc 0 ac 1\nc1 in m 0.5p\nrm m 0 1k\nc2 m out 0.2p\nrl out 0 1k\n"
                ".stage in=vin out=out\n",
                "coupling_cap_tiny c1,coupling_cap_tiny c2");
    /* 1 pF itself is not below 1 pF */
    EXPECT_LINT("t\nvin in 0 dc 0 ac 1\nc1 in out 1p\nrl out 0 1k\n.stage in=vin out=out\n", "");
    /* without a stage there is no signal path to be in series with */
    EXPECT_LINT("t\nvin in 0 dc 0 ac 1\nc1 in out 0.5p\nrl out 0 1k\n", "");
}

static void test_supply_is_no_signal_path(void **state)
{
    (void)state;
    /* in -> rin -> vcc -> r2 -> out goes round c1, but vcc is held by a V source (AC ground) */
    EXPECT_LINT("t\nvcc vcc 0 5\nvin in 0 dc 0 ac 1\nrin in vcc 10k\nc1 in b 0.5p\nr1 b 0 1k\n"
                "r3 b out 1k\nr2 vcc out 10k\nrl out 0 10k\n.stage in=vin out=out\n",
                "coupling_cap_tiny c1");
    /* fed by a current source instead, vcc carries signal: c1 is bypassed */
    EXPECT_LINT("t\nicc 0 vcc 1m\nrcc vcc 0 5k\nvin in 0 dc 0 ac 1\nrin in vcc 10k\n"
                "c1 in b 0.5p\nr1 b 0 1k\nr3 b out 1k\nr2 vcc out 10k\nrl out 0 10k\n"
                ".stage in=vin out=out\n",
                "");
}

static void test_transistor_paths(void **state)
{
    (void)state;
    /* a common-emitter stage, Ic about 1.4 mA: the input capacitor is in series (the signal
     * crosses Q1 from base to collector); a small capacitor from base to collector is beside
     * Q1, not in series; an element with both ends on one node changes nothing */
    static const char *stage = "t\n.model tn npn is=1e-14 bf=150\nvcc vcc 0 12\n"
                               "vin in 0 dc 0 ac 1\nc1 in b 0.5p\nr1 vcc b 47k\nr2 b 0 10k\n"
                               "q1 c b e tn\nrc vcc c 4.7k\nre e 0 1k\ncbc b c 0.5p\n"
                               "rloop c c 1k\nc2 c out 1u\nrl out 0 100k\n.stage in=vin out=out\n";
    EXPECT_LINT(stage, "coupling_cap_tiny c1");
    /* a transistor the signal never reaches is no stage transistor: a saturated switch
     * elsewhere on the board */
    EXPECT_LINT("t\n.model tn npn is=1e-14 bf=150\nvcc vcc 0 12\nvin in 0 dc 0 ac 1\n"
                "r0 in 0 1k\nrl in out 1k\nro out 0 1k\nvsw sw 0 5\nrb sw b 1k\n"
                "q9 c b 0 tn\nrc vcc c 1k\n.stage in=vin out=out\n",
                "");
    /* the same switch driven by the stage's signal is one */
    EXPECT_LINT("t\n.model tn npn is=1e-14 bf=150\nvcc vcc 0 12\nvin in 0 dc 5 ac 1\n"
                "rb in b 1k\nq9 c b 0 tn\nrc vcc c 1k\nc2 c out 1u\nrl out 0 1k\n"
                ".stage in=vin out=out\n",
                "stage_not_active q9");
}

static void test_fet_amplifying_region(void **state)
{
    (void)state;
    /* a JFET whose drain resistor is far too large for its current (Idss = BETA VTO^2 = 4 mA
     * would drop 40 V across 10 kohm): it sits in the linear region, and the warning names the
     * region a FET amplifies in, saturation (Shichman-Hodges regions, docs/models.md) */
    ss_circuit *ckt = ss_test_parse("t\n.model jn njf vto=-2 beta=1e-3\nvdd vdd 0 12\n"
                                    "vin in 0 dc 0 ac 1\nrg in g 1k\nj1 d g 0 jn\n"
                                    "rd vdd d 10k\nc2 d out 1u\nrl out 0 100k\n"
                                    ".stage in=vin out=out\n");
    ss_solver *sv = ss_test_sv(ckt);
    int n = 0;
    ss_error err = {0};
    assert_int_equal(ss_lint_run(sv, &n, &err), SS_OK);
    assert_int_equal(n, 1);
    const char *subject = NULL;
    assert_string_equal(ss_solver_warning_lint(sv, 0, &subject), "stage_not_active");
    assert_string_equal(subject, "j1");
    ss_assert_contains(ss_solver_warning(sv, 0), "stage transistor in linear at the operating "
                                                 "point, not saturation");
    ss_test_destroy(&ckt);
}

static void test_every_allocation_failure_is_clean(void **state)
{
    (void)state;
    static const char *text = "t\n.model tn npn is=1e-14 bf=150\nvcc vcc 0 12\n"
                              "vin in 0 dc 0 ac 1\nc1 in b 0.5p\nr1 vcc bb 47k\nr2 b 0 10k\n"
                              "q1 c b e tn\nrc vcc c 4.7m\nre e 0 1k\nce e 0 1f\n"
                              "c2 c out 1u\nrl out 0 2e12\nv5 d 0 5\n.model dd d is=1e-14\n"
                              "d1 d 0 dd\n.stage in=vin out=out\n";
    long n;
    int nomem_seen = 0, n_ok = -1;
    for (n = 0; n < 10000; n++) {
        ss_circuit *ckt = NULL;
        ss_table *op = ss_test_op(text, &ckt);
        ss_error err = {0};
        int count = -1;
        ss_alloc_fail_at(n);
        ss_status st = ss_lint_run(ss_test_sv(ckt), &count, &err);
        ss_alloc_fail_at(-1);
        ss_table_destroy(&op);
        ss_test_destroy(&ckt);
        if (st == SS_OK) {
            n_ok = count;
            break;
        }
        assert_int_equal(st, SS_ERR_NOMEM);
        assert_true(err.message[0] != '\0');
        nomem_seen++;
    }
    /* milli_suffix rc, femto_suffix ce, resistor_range rl, one_connection bb,
     * coupling_cap_tiny c1, stage_not_active q1, huge_current v5 and d1 */
    assert_int_equal(n_ok, 8);
    assert_true(nomem_seen > 2);
    print_message("lint allocation sweep: %ld failure points, all clean\n", n);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_value_si_exp),
        cmocka_unit_test(test_series_capacitor),
        cmocka_unit_test(test_supply_is_no_signal_path),
        cmocka_unit_test(test_transistor_paths),
        cmocka_unit_test(test_fet_amplifying_region),
        cmocka_unit_test(test_every_allocation_failure_is_clean),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
