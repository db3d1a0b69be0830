/* Solver contexts: several contexts of one parsed circuit, values set by name, parallel
 * threads. The reference for every value here is an independent computation of the same
 * circuit: a fresh parse with the value written into the netlist text (or given as a --set
 * override), solved alone -- a context must give the same bits, not merely close numbers. */
#include <pthread.h>

#include "ss_test.h"

/* A bias network whose resistors follow one parameter through an expression, and a
 * transistor whose model a context may change (an invented stage). */
static const char *BIAS =
    "bias network\n"
    ".param rb=47k\n"
    "vcc vcc 0 9\n"
    "r1 vcc b {rb}\n"
    "r2 b 0 {rb/4.7}\n"
    "rc vcc c 3.3k\n"
    "re e 0 680\n"
    "q1 c b e qn\n"
    ".model qn npn is=2e-14 bf=180 vaf=60\n";

static double solve_vc(ss_solver *sv)
{
    ss_table *op = NULL;
    ss_error err = {0};
    if (ss_op_solve(sv, &op, NULL, &err) != SS_OK) {
        print_error("op failed: %s\n", err.message);
        fail();
    }
    double v = ss_test_opval(op, "v(c)");
    ss_table_destroy(&op);
    return v;
}

/* v(c) of a fresh parse with overrides, solved on its own context. */
static double fresh_vc(const char *name, const char *value)
{
    ss_override ov = {name, value};
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    assert_int_equal(ss_circuit_parse_text(BIAS, strlen(BIAS), "bias.cir", &ov, name ? 1 : 0,
                                           &ckt, &err),
                     SS_OK);
    ss_solver *sv = NULL;
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    double v = solve_vc(sv);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    return v;
}

static void assert_same_bits(double a, double b)
{
    if (memcmp(&a, &b, sizeof a) != 0) {
        print_error("%.17g and %.17g differ\n", a, b);
        fail();
    }
}

static void test_set_param_reaches_expressions(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(BIAS);
    ss_solver *sv = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    assert_int_equal(ss_solver_set_value(sv, "RB", 56e3, &err), SS_OK);
    double r2;
    assert_int_equal(ss_solver_get_value(sv, "r2", &r2, &err), SS_OK);
    assert_same_bits(r2, 56e3 / 4.7); /* {rb/4.7} re-evaluated */
    assert_same_bits(solve_vc(sv), fresh_vc("rb", "56000"));
    ss_solver_reset_values(sv);
    assert_same_bits(solve_vc(sv), fresh_vc(NULL, NULL));
    /* an element value and a model parameter, as --set names them */
    assert_int_equal(ss_solver_set_value(sv, "rc", 3.9e3, &err), SS_OK);
    assert_same_bits(solve_vc(sv), fresh_vc("rc", "3900"));
    ss_solver_reset_values(sv);
    assert_int_equal(ss_solver_set_value(sv, "qn.bf", 95.0, &err), SS_OK);
    assert_same_bits(solve_vc(sv), fresh_vc("qn.bf", "95"));
    /* the circuit itself never changed */
    double nominal;
    assert_int_equal(ss_circuit_get_value(ckt, "qn.bf", &nominal, &err), SS_OK);
    assert_same_bits(nominal, 180.0);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
}

static void test_set_value_refusals(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(BIAS);
    ss_solver *sv = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    assert_int_equal(ss_solver_set_value(sv, "nosuch", 1.0, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "nosuch");
    memset(&err, 0, sizeof err); /* an error keeps its first message */
    assert_int_equal(ss_solver_set_value(sv, "qn.nosuch", 1.0, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "no parameter 'nosuch'");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_value(sv, "q1", 1.0, &err), SS_ERR_INPUT);
    memset(&err, 0, sizeof err);
    /* out of range: refused by the next analysis, naming the line */
    assert_int_equal(ss_solver_set_value(sv, "rb", -1.0, &err), SS_OK);
    ss_table *op = NULL;
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "resistance must be positive");
    assert_string_equal(err.file, "test.cir");
    ss_solver_reset_values(sv);
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_OK);
    ss_table_destroy(&op);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
}

/* Two transistors on one card; the reference for "q1's own parameter" is the same text with
 * q1 on a card of its own that differs only there. */
static const char *PAIR_FMT =
    "matched pair\n"
    "vcc vcc 0 9\n"
    "rb1 vcc b1 820k\nq1 c1 b1 0 %s\nrc1 vcc c1 3.3k\n"
    "rb2 vcc b2 820k\nq2 c2 b2 0 qn\nrc2 vcc c2 3.3k\n"
    ".model qn npn is=2e-14 bf=180 vaf=%s\n"
    ".model qown npn is=2e-14 bf=%s vaf=%s\n";

static void pair_solve(ss_solver *sv, double *vc1, double *vc2)
{
    ss_table *op = NULL;
    ss_error err = {0};
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_OK);
    *vc1 = ss_test_opval(op, "v(c1)");
    *vc2 = ss_test_opval(op, "v(c2)");
    ss_table_destroy(&op);
}

static void pair_fresh(const char *q1_card, const char *vaf, const char *own_bf, double *vc1,
                       double *vc2)
{
    char text[1024];
    snprintf(text, sizeof text, PAIR_FMT, q1_card, vaf, own_bf, vaf);
    ss_circuit *ckt = ss_test_parse(text);
    ss_solver *sv = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    pair_solve(sv, vc1, vc2);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
}

static void test_instance_model_parameter(void **state)
{
    (void)state;
    char text[1024];
    snprintf(text, sizeof text, PAIR_FMT, "qn", "60", "180", "60");
    ss_circuit *ckt = ss_test_parse(text);
    ss_solver *sv = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    double a1, a2, b1, b2, v;
    /* q1.bf: q1 alone, as if it had a card of its own */
    assert_int_equal(ss_solver_set_value(sv, "Q1.BF", 95.0, &err), SS_OK);
    pair_solve(sv, &a1, &a2);
    pair_fresh("qown", "60", "95", &b1, &b2);
    assert_same_bits(a1, b1);
    assert_same_bits(a2, b2);
    assert_int_equal(ss_solver_get_value(sv, "q1.bf", &v, &err), SS_OK);
    assert_same_bits(v, 95.0);
    assert_int_equal(ss_solver_get_value(sv, "q2.bf", &v, &err), SS_OK);
    assert_same_bits(v, 180.0);
    assert_int_equal(ss_solver_get_value(sv, "qn.bf", &v, &err), SS_OK);
    assert_same_bits(v, 180.0);
    /* the card changed afterwards: q1 follows it in everything but its own BF */
    assert_int_equal(ss_solver_set_value(sv, "qn.vaf", 80.0, &err), SS_OK);
    pair_solve(sv, &a1, &a2);
    pair_fresh("qown", "80", "95", &b1, &b2);
    assert_same_bits(a1, b1);
    assert_same_bits(a2, b2);
    assert_int_equal(ss_solver_get_value(sv, "q1.vaf", &v, &err), SS_OK);
    assert_same_bits(v, 80.0);
    /* reset: both back on the card */
    ss_solver_reset_values(sv);
    pair_solve(sv, &a1, &a2);
    pair_fresh("qn", "60", "180", &b1, &b2);
    assert_same_bits(a1, b1);
    assert_same_bits(a2, b2);
    /* its circuit's nominal is the card's; a parameter the kind lacks is refused */
    assert_int_equal(ss_circuit_get_value(ckt, "q2.bf", &v, &err), SS_OK);
    assert_same_bits(v, 180.0);
    assert_int_equal(ss_solver_set_value(sv, "q1.nosuch", 1.0, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "of q1 has no parameter 'nosuch'");
    /* out of range: the next analysis names the instance */
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_value(sv, "q1.bf", -1.0, &err), SS_OK);
    ss_table *op = NULL;
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "q1: ");
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
}

static void test_fixed_settings_refused(void **state)
{
    (void)state;
    /* .tran's stop time is written in terms of a parameter: a context cannot move it */
    ss_circuit *ckt = ss_test_parse("fixed\n.param tstop=1m\nv1 a 0 sin(0 1 1k)\nr1 a 0 1k\n"
                                    ".tran 10u {tstop}\n");
    ss_solver *sv = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    assert_int_equal(ss_solver_set_value(sv, "tstop", 2e-3, &err), SS_OK);
    ss_table *op = NULL;
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "fixed once the netlist is read");
    assert_int_equal(err.line, 5);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
}

static void test_stage_load_follows_its_param(void **state)
{
    (void)state;
    /* .stage load= written in terms of a .param is the context's to change (the report's Zout
     * check uses it); a load named on the context wins over it */
    ss_circuit *ckt = ss_test_parse("load\n.param rl=47k\nv1 a 0 ac 1\nr1 a out 1k\n"
                                    "rl out 0 {rl}\n.ac dec 1 1 10\n"
                                    ".stage in=v1 out=out load={rl}\n");
    ss_solver *sv = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    assert_int_equal(ss_solver_set_value(sv, "rl", 10e3, &err), SS_OK);
    ss_table *op = NULL;
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_OK);
    ss_table_destroy(&op);
    double r;
    assert_int_equal(ss_solver_get_value(sv, "rl", &r, &err), SS_OK);
    assert_same_bits(r, 10e3);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
}

typedef struct job {
    const ss_circuit *ckt;
    const char *name;
    double value;
    double vc[50];
} job;

/* One context, fifty solves alternating between two values: what a study's thread does. */
/* A common-emitter stage whose card lacks the parameters that add matrix entries (RBM, XCJC,
 * CJS) or internal nodes (RB): a context that sets them must give, at every frequency, the
 * bits of a fresh parse with the values written into the card (the layout of the matrix follows
 * the values, not the card it started from). "%s" is what the card gets appended. */
static const char *CE_FMT = "line receiver\n"
                            "vcc vcc 0 12\nvs src 0 dc 0 ac 1\nrs src b 600\n"
                            "r1 vcc b 100k\nr2 b 0 22k\nrc vcc c 4.7k\nre e 0 1k\n"
                            "ce e 0 100u\nq1 c b e qn\n"
                            ".model qn npn is=5e-15 bf=180 vaf=90 ikf=0.08 rb=%s re=0.4 rc=2 "
                            "cje=8p mje=0.35 cjc=3p tf=0.35n tr=30n%s\n"
                            ".ac dec 2 1k 100meg\n";

static ss_table *ce_ac(ss_solver *sv)
{
    ss_table *ac = NULL;
    ss_error err = {0};
    if (ss_ac_sweep_run(sv, &ac, &err) != SS_OK) {
        print_error("ac failed: %s\n", err.message);
        fail();
    }
    return ac;
}

static void ce_compare(ss_solver *sv, const char *rb, const char *extra)
{
    char text[1024];
    snprintf(text, sizeof text, CE_FMT, rb, extra);
    ss_circuit *ckt = ss_test_parse(text);
    ss_solver *fresh = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &fresh, &err), SS_OK);
    ss_table *a = ce_ac(sv), *b = ce_ac(fresh);
    int col = ss_table_col_index(a, "vm(c)");
    assert_true(col >= 0 && ss_table_rows(a) == ss_table_rows(b));
    for (int r = 0; r < ss_table_rows(a); r++)
        assert_same_bits(ss_table_get(a, r, col), ss_table_get(b, r, col));
    ss_table_destroy(&a);
    ss_table_destroy(&b);
    ss_solver_destroy(&fresh);
    ss_circuit_destroy(&ckt);
}

static void test_values_that_change_the_layout(void **state)
{
    (void)state;
    char text[1024];
    snprintf(text, sizeof text, CE_FMT, "60", "");
    ss_circuit *ckt = ss_test_parse(text);
    ss_solver *sv = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &sv, &err), SS_OK);
    ce_compare(sv, "60", "");
    /* each on its own, after a solve at the card's values; then back to the card */
    static const struct {
        const char *name, *text;
        double v;
    } one[] = {{"qn.cjs", " cjs=20p", 20e-12},  {"q1.cjs", " cjs=20p", 20e-12},
               {"qn.xcjc", " xcjc=0.3", 0.3},   {"q1.xcjc", " xcjc=0.3", 0.3},
               {"qn.rbm", " rbm=5", 5.0},       {"q1.rbm", " rbm=5", 5.0}};
    for (size_t k = 0; k < sizeof one / sizeof one[0]; k++) {
        assert_int_equal(ss_solver_set_value(sv, one[k].name, one[k].v, &err), SS_OK);
        ce_compare(sv, "60", one[k].text);
        ss_solver_reset_values(sv);
        ce_compare(sv, "60", "");
    }
    /* together, with IRB; then RB equal to RBM (a constant base resistance again) */
    assert_int_equal(ss_solver_set_value(sv, "qn.rbm", 5.0, &err), SS_OK);
    assert_int_equal(ss_solver_set_value(sv, "qn.irb", 2e-4, &err), SS_OK);
    assert_int_equal(ss_solver_set_value(sv, "qn.xcjc", 0.3, &err), SS_OK);
    assert_int_equal(ss_solver_set_value(sv, "qn.cjs", 20e-12, &err), SS_OK);
    ce_compare(sv, "60", " rbm=5 irb=0.2m xcjc=0.3 cjs=20p");
    assert_int_equal(ss_solver_set_value(sv, "qn.rb", 5.0, &err), SS_OK);
    ce_compare(sv, "5", " rbm=5 irb=0.2m xcjc=0.3 cjs=20p");
    /* RB to zero: no b', so no external CJC part and no varying base resistance */
    assert_int_equal(ss_solver_set_value(sv, "qn.rb", 0.0, &err), SS_OK);
    ce_compare(sv, "0", " rbm=5 irb=0.2m xcjc=0.3 cjs=20p");
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
}

static void *run_job(void *arg)
{
    job *j = arg;
    ss_solver *sv = NULL;
    ss_error err = {0};
    if (ss_solver_create(j->ckt, &sv, &err) != SS_OK)
        return NULL;
    for (int k = 0; k < 50; k++) {
        ss_solver_reset_values(sv);
        if (k % 2 == 0)
            ss_solver_set_value(sv, j->name, j->value, &err);
        ss_table *op = NULL;
        j->vc[k] = ss_op_solve(sv, &op, NULL, &err) == SS_OK ? ss_table_lookup(op, "v(c)", 0)
                                                             : (double)NAN;
        ss_table_destroy(&op);
    }
    ss_solver_destroy(&sv);
    return NULL;
}

static void test_two_contexts_two_threads(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(BIAS);
    job a = {ckt, "rb", 39e3, {0}}, b = {ckt, "qn.bf", 260.0, {0}};
    pthread_t ta, tb;
    assert_int_equal(pthread_create(&ta, NULL, run_job, &a), 0);
    assert_int_equal(pthread_create(&tb, NULL, run_job, &b), 0);
    pthread_join(ta, NULL);
    pthread_join(tb, NULL);
    double a_set = fresh_vc("rb", "39000"), b_set = fresh_vc("qn.bf", "260"),
           nominal = fresh_vc(NULL, NULL);
    for (int k = 0; k < 50; k++) {
        assert_same_bits(a.vc[k], k % 2 == 0 ? a_set : nominal);
        assert_same_bits(b.vc[k], k % 2 == 0 ? b_set : nominal);
    }
    ss_circuit_destroy(&ckt);
}

static void test_temperature_per_context(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(BIAS);
    ss_solver *hot = NULL, *cold = NULL;
    ss_error err = {0};
    assert_int_equal(ss_solver_create(ckt, &hot, &err), SS_OK);
    assert_int_equal(ss_solver_create(ckt, &cold, &err), SS_OK);
    assert_int_equal(ss_solver_set_temp(hot, 85.0, &err), SS_OK);
    assert_int_equal(ss_solver_set_temp(cold, -40.0, &err), SS_OK);
    double vh = solve_vc(hot), vcold = solve_vc(cold);
    /* more collector current when hot: Vbe falls by about 2 mV/K (common practice) */
    assert_true(vh < vcold);
    /* each context keeps its own temperature; the circuit keeps the netlist's */
    assert_true(ss_solver_temp_c(hot) == 85.0 && ss_solver_temp_c(cold) == -40.0);
    assert_true(ss_circuit_temp_c(ckt) == 27.0);
    ss_solver_reset_values(cold);
    assert_true(ss_solver_temp_c(cold) == ss_circuit_temp_c(ckt));
    ss_solver_destroy(&hot);
    ss_solver_destroy(&cold);
    ss_circuit_destroy(&ckt);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_set_param_reaches_expressions),
        cmocka_unit_test(test_set_value_refusals),
        cmocka_unit_test(test_instance_model_parameter),
        cmocka_unit_test(test_fixed_settings_refused),
        cmocka_unit_test(test_stage_load_follows_its_param),
        cmocka_unit_test(test_values_that_change_the_layout),
        cmocka_unit_test(test_two_contexts_two_threads),
        cmocka_unit_test(test_temperature_per_context),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
