/* Allocation-failure sweep: parse -> context -> value by name -> operating point -> AC -> stage
 * with allocation N failing,
 * N = 0, 1, 2, ... until a run succeeds; every failing run must end in a clean error (the
 * sanitizer build checks for leaks and invalid accesses). */
#include "ss_test.h"

#include "util/util.h"

static const char *NETLIST = "alloc sweep\n"
                             ".model qn npn is=2e-15 bf=180 vaf=90 cje=8p cjc=3p tf=0.4n rb=50\n"
                             ".subckt bias top mid r1=82k r2=15k\n"
                             "ra top mid {r1}\nrb mid 0 {r2}\n"
                             ".ends\n"
                             ".param rcv=4.7k\n"
                             "vcc vcc 0 12\nvin in 0 dc 0 ac 1\nrs in b1 600\nc1 b1 b 10u\n"
                             "x1 vcc b bias\nrc vcc c {rcv}\nre e 0 1k\nce e 0 100u\n"
                             "q1 c b e qn\nc2 c out 10u\nrl out 0 47k\n"
                             ".ac dec 5 10 10meg\n.stage in=vin out=out\n";

static ss_status run_once(void)
{
    ss_circuit *ckt = NULL;
    ss_solver *sv = NULL;
    ss_table *op = NULL, *ac = NULL, *st = NULL, *sum = NULL;
    ss_error err = {0};
    ss_status s = ss_circuit_parse_text(NETLIST, strlen(NETLIST), "a.cir", NULL, 0, &ckt, &err);
    if (s == SS_OK)
        s = ss_solver_create(ckt, &sv, &err);
    if (s == SS_OK) /* a value set by name: the replay allocates nothing, but is swept too */
        s = ss_solver_set_value(sv, "rcv", 3.9e3, &err);
    if (s == SS_OK)
        s = ss_op_solve(sv, &op, NULL, &err);
    if (s == SS_OK)
        s = ss_ac_sweep_run(sv, &ac, &err);
    if (s == SS_OK)
        s = ss_stage_run(sv, &st, &sum, &err);
    if (s != SS_OK) {
        assert_true(err.code != SS_OK); /* a failure always says why */
        assert_true(err.message[0] != '\0');
    }
    ss_table_destroy(&op);
    ss_table_destroy(&ac);
    ss_table_destroy(&st);
    ss_table_destroy(&sum);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    return s;
}

static void test_every_allocation_failure_is_clean(void **state)
{
    (void)state;
    long n;
    int nomem_seen = 0;
    for (n = 0; n < 100000; n++) {
        ss_alloc_fail_at(n);
        ss_status s = run_once();
        if (s == SS_OK)
            break;
        nomem_seen += s == SS_ERR_NOMEM;
    }
    ss_alloc_fail_at(-1);
    assert_true(n > 10);
    assert_true(nomem_seen > 0);
    print_message("allocation sweep: %ld failure points, all clean\n", n);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_every_allocation_failure_is_clean),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
