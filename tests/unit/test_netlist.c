/* Netlist module: SI values, expressions, continuation/comments/case, .param, .subckt
 * expansion, .include, and the located error messages. */
#define _DEFAULT_SOURCE /* mkdtemp */
#include "ss_test.h"

#include <stdlib.h>
#include <sys/stat.h>
#include <unistd.h>

#include "netlist/circuit.h"
#include "devices/device.h"
#include "netlist/netlist.h"
#include "netlist/parser_internal.h"
#include "solver/solver.h"

/* ---- values: SI suffixes are the trade's convention (common practice) --------------------- */

static void test_si_suffix_meg_is_1e6(void **state)
{
    (void)state;
    double v;
    assert_int_equal(value_parse("1meg", &v), 0);
    ss_assert_close(v, 1e6, 1e-15, 0);
    assert_int_equal(value_parse("2.2MEG", &v), 0);
    ss_assert_close(v, 2.2e6, 1e-15, 0);
}

static void test_si_suffix_table(void **state)
{
    (void)state;
    const struct {
        const char *text;
        double value;
    } cases[] = {
        {"1t", 1e12},      {"1g", 1e9},     {"4.7k", 4.7e3},  {"10m", 10e-3}, {"3u", 3e-6},
        {"100n", 100e-9},  {"22p", 22e-12}, {"1f", 1e-15},    {"1mil", 25.4e-6},
        {"4.7kOhm", 4.7e3}, {"100nF", 100e-9}, {"5V", 5.0},  {"1e3", 1e3},   {"-2.5e-3", -2.5e-3},
        {".5", 0.5},       {"1.5E+2k", 150e3},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        double v = 0;
        assert_int_equal(value_parse(cases[i].text, &v), 0);
        ss_assert_close(v, cases[i].value, 1e-15, 0);
    }
}

static void test_bad_values_rejected(void **state)
{
    (void)state;
    const char *bad[] = {"", "abc", "k", "1..2", "10x5", "1k2", "1e400", "--1", "1.5.3"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        double v;
        assert_int_not_equal(value_parse(bad[i], &v), 0);
    }
}

/* ---- expressions -------------------------------------------------------------------------- */

static int no_names(void *ctx, const char *name, double *out, char *msg, size_t len)
{
    (void)ctx;
    if (strcmp(name, "rc") == 0) {
        *out = 4700.0;
        return 0;
    }
    snprintf(msg, len, "unknown parameter '%s'", name);
    (void)out;
    return -1;
}

static double eval_ok(const char *text)
{
    double v = (double)NAN;
    char msg[256] = "";
    if (expr_eval(text, no_names, NULL, &v, msg, sizeof msg) != 0) {
        print_error("'%s': %s\n", text, msg);
        fail();
    }
    return v;
}

static void test_expr_precedence_and_power(void **state)
{
    (void)state;
    ss_assert_close(eval_ok("1 + 2 * 3"), 7.0, 0, 0);
    ss_assert_close(eval_ok("(1 + 2) * 3"), 9.0, 0, 0);
    ss_assert_close(eval_ok("2 ^ 3 ^ 2"), 512.0, 0, 0); /* right-associative */
    ss_assert_close(eval_ok("-2 ^ 2"), -4.0, 0, 0);    /* power binds tighter than minus */
    ss_assert_close(eval_ok("2 ^ -1"), 0.5, 0, 0);
    ss_assert_close(eval_ok("--3"), 3.0, 0, 0);
    ss_assert_close(eval_ok("10 / 4 - 1"), 1.5, 0, 0);
    ss_assert_close(eval_ok("2 * rc"), 9400.0, 0, 0);
    ss_assert_close(eval_ok("4.7k * 2"), 9400.0, 1e-15, 0);
}

static void test_expr_functions(void **state)
{
    (void)state;
    ss_assert_close(eval_ok("sqrt(16)"), 4.0, 0, 0);
    ss_assert_close(eval_ok("exp(0)"), 1.0, 0, 0);
    ss_assert_close(eval_ok("ln(exp(2))"), 2.0, 1e-15, 0);
    ss_assert_close(eval_ok("log10(1000)"), 3.0, 1e-15, 0);
    ss_assert_close(eval_ok("abs(-3)"), 3.0, 0, 0);
    ss_assert_close(eval_ok("min(2, 5) + max(2, 5)"), 7.0, 0, 0);
    ss_assert_close(eval_ok("pow(2, 10)"), 1024.0, 0, 0);
}

static void test_expr_errors_have_messages(void **state)
{
    (void)state;
    const struct {
        const char *text, *msg;
    } cases[] = {
        {"1 / 0", "division by zero"},
        {"2 * foo", "unknown parameter 'foo'"},
        {"sqrt(2", "missing ')'"},
        {"frob(2)", "unknown function 'frob'"},
        {"1 +", "expression ends too early"},
        {"exp(1000)", "not finite"},
        {"1 $ 2", "unexpected"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        double v;
        char msg[256] = "";
        assert_int_not_equal(expr_eval(cases[i].text, no_names, NULL, &v, msg, sizeof msg), 0);
        ss_assert_contains(msg, cases[i].msg);
    }
}

static void test_expr_nesting_limit(void **state)
{
    (void)state;
    char text[2000];
    size_t n = 0;
    for (int i = 0; i < 300; i++)
        text[n++] = '(';
    text[n++] = '1';
    for (int i = 0; i < 300; i++)
        text[n++] = ')';
    text[n] = '\0';
    double v;
    char msg[256] = "";
    assert_int_not_equal(expr_eval(text, no_names, NULL, &v, msg, sizeof msg), 0);
    ss_assert_contains(msg, "nested too deeply");
}

/* ---- netlist structure -------------------------------------------------------------------- */

static void test_continuation_comments_case(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("Title line is ignored\n"
                                    "* a comment\n"
                                    "V1 IN 0 DC 10 ; trailing comment\n"
                                    "R1 in\n"
                                    "+ MID 1K\n"
                                    "r2 mid 0 {1k}\n"
                                    ".END\n"
                                    "R3 this line is after .end\n");
    assert_int_equal(ss_test_sv(ckt)->n_elem, 3);
    assert_string_equal(ckt->title, "Title line is ignored");
    assert_true(circuit_find_node(ckt, "mid") > 0);
    assert_int_equal(circuit_find_elem(ckt, "r1"), 1);
    ss_assert_close(ss_test_sv(ckt)->elem[1].value, 1000.0, 0, 0);
    ss_test_destroy(&ckt);
    assert_null(ckt);
}

static void test_param_order_free_and_override(void **state)
{
    (void)state;
    const char *text = "params\n"
                       ".param rtot = {ra + rb}\n"
                       ".param ra=1k rb = 2 * ra\n"
                       "v1 a 0 1\n"
                       "r1 a 0 {rtot}\n";
    ss_circuit *ckt = ss_test_parse(text);
    ss_assert_close(ss_test_sv(ckt)->elem[1].value, 3000.0, 1e-15, 0);
    ss_test_destroy(&ckt);
    ss_override ov[] = {{"RA", "2k"}};
    ss_error err = {0};
    assert_int_equal(ss_circuit_parse_text(text, strlen(text), "t.cir", ov, 1, &ckt, &err), SS_OK);
    ss_assert_close(ss_test_sv(ckt)->elem[1].value, 6000.0, 1e-15, 0);
    ss_test_destroy(&ckt);
}

static void test_override_element_and_model_param(void **state)
{
    (void)state;
    const char *text = "ovr\n"
                       ".model qg npn bf=100\n"
                       "v1 c 0 5\nv2 b 0 0.7\nq1 c b 0 qg\nr9 c 0 1k\n";
    ss_override ov[] = {{"r9", "2.2k"}, {"qg.bf", "250"}};
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    assert_int_equal(ss_circuit_parse_text(text, strlen(text), "t.cir", ov, 2, &ckt, &err), SS_OK);
    ss_assert_close(ss_test_sv(ckt)->elem[3].value, 2200.0, 1e-15, 0);
    ss_assert_close(ss_test_sv(ckt)->models[0]->p[1], 250.0, 0, 0);
    ss_test_destroy(&ckt);
    ss_override bad[] = {{"nosuch", "1"}};
    assert_int_equal(ss_circuit_parse_text(text, strlen(text), "t.cir", bad, 1, &ckt, &err),
                     SS_ERR_INPUT);
    assert_string_equal(err.message,
                        "--set nosuch: no parameter, element or model parameter of that name");
}

static void test_subckt_nested_with_params(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("nested subcircuits\n"
                                    ".subckt half a b r=1k\n"
                                    "r1 a m {r}\n"
                                    "r2 m b {r}\n"
                                    ".ends half\n"
                                    ".subckt quad in out val=2k\n"
                                    ".param halfval = {val / 2}\n"
                                    "x1 in mid half r={halfval}\n"
                                    "x2 mid out half\n"
                                    ".ends\n"
                                    "v1 top 0 1\n"
                                    "xq top 0 quad val=4k\n");
    /* xq.x1.r1 = 2k (val/2), xq.x2.r1 = 1k (default) */
    int e = circuit_find_elem(ckt, "xq.x1.r1");
    assert_true(e >= 0);
    ss_assert_close(ss_test_sv(ckt)->elem[e].value, 2000.0, 1e-15, 0);
    e = circuit_find_elem(ckt, "xq.x2.r2");
    assert_true(e >= 0);
    ss_assert_close(ss_test_sv(ckt)->elem[e].value, 1000.0, 1e-15, 0);
    assert_true(circuit_find_node(ckt, "xq.mid") > 0);
    assert_true(circuit_find_node(ckt, "xq.x1.m") > 0);
    assert_int_equal(ss_test_sv(ckt)->n_elem, 5);
    ss_test_destroy(&ckt);
}

static void write_file(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

static void test_include_relative_to_including_file(void **state)
{
    (void)state;
    char dir[] = "/tmp/ss_inc_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char sub[300], p1[300], p2[300];
    snprintf(sub, sizeof sub, "%s/lib", dir);
    assert_int_equal(mkdir(sub, 0777), 0);
    snprintf(p1, sizeof p1, "%s/top.cir", dir);
    snprintf(p2, sizeof p2, "%s/lib/models.lib", dir);
    write_file(p1, "top\n.include lib/models.lib\nv1 a 0 1\nd1 a 0 dgen\n");
    write_file(p2, "* models\n.model dgen d is=2e-14\n");
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    assert_int_equal(ss_circuit_parse_file(p1, NULL, 0, &ckt, &err), SS_OK);
    assert_int_equal(ckt->n_models, 1);
    ss_test_destroy(&ckt);
    /* a cycle */
    write_file(p2, ".include ../top.cir\n");
    ss_status st = ss_circuit_parse_file(p1, NULL, 0, &ckt, &err);
    if (st != SS_ERR_INPUT)
        print_error("%s:%d: %s\n", err.file, err.line, err.message);
    assert_int_equal(st, SS_ERR_INPUT);
    ss_assert_contains(err.message, "includes itself (cycle)");
    assert_int_equal(err.line, 1);
    remove(p1);
    remove(p2);
    rmdir(sub);
    rmdir(dir);
}

/* ---- located errors ------------------------------------------------------------------------ */

static void expect_error(const char *text, const char *message)
{
    char buf[1400];
    ss_test_parse_error(text, buf, sizeof buf);
    if (strcmp(buf, message) != 0) {
        print_error("got      '%s'\nexpected '%s'\n", buf, message);
        fail();
    }
}

static void test_errors_name_line_and_element(void **state)
{
    (void)state;
    expect_error("t\nv1 a 0 1\nz1 a 0 5\n", "test.cir:3: z1: unknown element type 'z'");
    expect_error("t\nr1 a 0 -5\n", "test.cir:2: r1: resistance must be positive, got -5");
    expect_error("t\nr1 a 0 0\n", "test.cir:2: r1: resistance must be positive, got 0");
    expect_error("t\nr1 a\n", "test.cir:2: r1: needs 2 nodes, got 1");
    expect_error("t\nr1 a 0 10x5\n",
                 "test.cir:2: r1: bad resistance '10x5': expected a number with an optional SI "
                 "suffix or a {expression}");
    expect_error("t\nv1 a 0 1\nq1 a a 0 nomodel\n", "test.cir:3: q1: unknown model 'nomodel'");
    expect_error("t\n.model dd d is=1e-14\nv1 a 0 1\nq1 a a 0 dd\n",
                 "test.cir:4: q1: model 'dd' is a d model; a BJT needs a model of type npn or pnp");
    expect_error("t\n.model qq npn bogus=3\n",
                 "test.cir:2: model 'qq': unknown parameter 'bogus' for a BJT model");
    expect_error("t\nr1 a 0 {2*nope}\n",
                 "test.cir:2: r1: resistance: unknown parameter 'nope'");
    expect_error("t\n.param a={b}\n.param b={a}\nr1 x 0 {a}\n",
                 "test.cir:3: .param b: parameter 'a' is defined in terms of itself");
    expect_error("t\n.subckt s a b\nx1 a b s\n.ends\nv1 n 0 1\nx9 n 0 s\n",
                 "test.cir:3: x1: subcircuits nested deeper than 32 (is 's' instantiating "
                 "itself?)");
    expect_error("t\n.subckt s a b\nr1 a b 1k\n.ends\nx1 n s\n",
                 "test.cir:5: x1: subcircuit 's' has 2 ports, 1 nodes given");
    expect_error("t\n.subckt s a b\nr1 a b 1k\n", "test.cir:2: .subckt s has no matching .ends");
    expect_error("t\n.ends\n", "test.cir:2: .ends without .subckt");
    expect_error("", "test.cir: empty netlist (no title line)");
    expect_error("only a title\n", "test.cir: the netlist has no elements");
    expect_error("t\nr1 a 0 1k\nr1 a 0 2k\n",
                 "test.cir:3: r1: element name used twice (first at test.cir:2)");
    expect_error("t\n.frob 3\n", "test.cir:2: unknown directive '.frob'");
    expect_error("t\nv1 a 0 1\nf1 a 0 vx 2\n",
                 "test.cir:3: f1: controlling source 'vx' is not a voltage source of the circuit");
    expect_error("t\nr1 a 0 1e400\n", "test.cir:2: r1: bad resistance '1e400': out of range");
    expect_error("t\n.ac dec 10 0 1k\nr1 a 0 1\n",
                 "test.cir:2: .ac: frequencies must be positive (got 0 and 1000 Hz)");
    expect_error("t\n.ac dec 10 1k 10\nr1 a 0 1\n",
                 "test.cir:2: .ac: stop frequency 10 Hz is below start 1000 Hz");
    expect_error("t\n.ac dec 0 1 10\nr1 a 0 1\n",
                 "test.cir:2: .ac: the point count must be a whole number >= 1, got 0");
    expect_error("t\nv1 a 0 1\nr1 a 0 1\n.stage in=v9 out=a\n",
                 "test.cir:4: stage input 'v9' is not an independent source of the circuit");
    expect_error("t\nv1 a 0 1\nr1 a 0 1\n.stage in=v1 out=zz\n",
                 "test.cir:4: stage output node 'zz' does not exist");
    expect_error("t\n.options reltol=1\nr1 a 0 1\n",
                 "test.cir:2: .options: unknown option 'reltol' (known: tol_rel, tol_v, tol_i, "
                 "gmin, newton_iters, tran_method, tran_tol_rel, tran_tol_v, lint_off, "
                 "model_extras)");
}

/* The BJT's optional substrate node: the fourth token is the model when it names one, else
 * the substrate node with the model after it; absent, the substrate is ground. A substrate
 * node tied to nothing else has no DC path (it connects only through CJS). */
static void test_bjt_substrate_node(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("four-node form\n"
                                    ".model qn npn cjs=1p\n"
                                    "vs sub 0 -2\nvc c 0 5\nvb b 0 0.7\n"
                                    "q1 c b 0 sub qn\n"
                                    "q2 c b 0 qn 2\n"
                                    "q3 c b 0 sub qn area=3\n");
    const ss_solver *sv = ss_test_sv(ckt);
    const element *q1 = &sv->elem[3], *q2 = &sv->elem[4], *q3 = &sv->elem[5];
    assert_int_equal(q1->n_node, 4);
    assert_int_equal(q1->node[3], sv->elem[0].node[0]); /* the node vs drives */
    assert_int_equal(q2->n_node, 3);
    ss_assert_close(q2->area, 2.0, 0, 0);
    assert_int_equal(q3->n_node, 4);
    ss_assert_close(q3->area, 3.0, 0, 0);
    ss_table *op = NULL;
    ss_error err = {0};
    assert_int_equal(ss_op_solve(ss_test_sv(ckt), &op, NULL, &err), SS_OK);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);

    expect_error("t\n.model qn npn\nv1 c 0 1\nq1 c b e s t qn\n",
                 "test.cir:4: q1: too many nodes before model 'qn' (expected collector, base, "
                 "emitter and an optional substrate)");
    expect_error("t\n.model qn npn\nv1 c 0 1\nq1 c b e s nomodel\n",
                 "test.cir:4: q1: unknown model 'nomodel'");
    expect_error("t\n.model qn npn\nv1 c 0 1\nq1 c b e s qn 2 9\n",
                 "test.cir:4: q1: unexpected '9' after the area value");
    expect_error("t\n.model qn npn\n.model dd d\nv1 c 0 1\nq1 c b e dd qn\n",
                 "test.cir:5: q1: model 'dd' is a d model; a BJT needs a model of type npn or "
                 "pnp");

    /* a floating substrate: refused when the context is made */
    const char *text = "t\n.model qn npn cjs=1p\nvc c 0 5\nvb b 0 0.7\nq1 c b 0 sub qn\n";
    ckt = ss_test_parse(text);
    ss_solver *sv2 = NULL;
    ss_status st = ss_solver_create(ckt, &sv2, &err);
    if (st == SS_OK) { /* the check may run when the context prepares */
        st = ss_op_solve(sv2, &op, NULL, &err);
        ss_table_destroy(&op);
    }
    assert_int_equal(st, SS_ERR_SINGULAR);
    assert_non_null(strstr(err.message, "node 'sub' has no DC path to ground"));
    ss_solver_destroy(&sv2);
    ss_circuit_destroy(&ckt);
}

static void test_binary_garbage_rejected(void **state)
{
    (void)state;
    const char text[] = "t\nr1 a\0\x01\x02 0 1k\n";
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    assert_int_equal(ss_circuit_parse_text(text, sizeof text - 1, "g.cir", NULL, 0, &ckt, &err),
                     SS_ERR_INPUT);
    assert_int_equal(err.line, 2);
    ss_assert_contains(err.message, "not a text netlist");
}

/* Names are never cut to fit a buffer: a name that does not fit is an error, so two long
 * names differing only at the end cannot silently become one node or one source. */
static void test_long_names_are_refused_not_cut(void **state)
{
    (void)state;
    char text[6000];
    char longname[1100];
    memset(longname, 'a', sizeof longname - 1);
    longname[sizeof longname - 1] = '\0';
    snprintf(text, sizeof text, "t\n.subckt s p\nr1 p %sx 1k\nr2 %sx 0 1k\n.ends\nv1 n 0 1\n"
             "x1 n s\n", longname, longname);
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    assert_int_equal(ss_circuit_parse_text(text, strlen(text), "t.cir", NULL, 0, &ckt, &err),
                     SS_ERR_LIMIT);
    assert_null(ckt);
    ckt = ss_test_parse("t\nv1 n 0 1\nr1 n 0 1k\n.ac dec 1 1 10\n");
    char src[400];
    memset(src, 'v', sizeof src - 1);
    src[sizeof src - 1] = '\0';
    assert_int_equal(ss_solver_set_stage(ss_test_sv(ckt), src, "n", &err), SS_ERR_INPUT);
    ss_test_destroy(&ckt);
}

/* A netlist node may be spelled like the internal node a device makes ("q1#b", the base behind
 * RB): after preparation the name still finds the netlist node, whose voltage is Vcc across the
 * divider 100k / (100k + r_pi path) -- checked only as "is the netlist node", not a value. */
static void test_internal_node_does_not_shadow_netlist_node(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("shadow\nvcc vcc 0 10\nrb vcc q1#b 100k\nrx q1#b b 1\n"
                                    "q1 vcc b 0 qn\n.model qn npn bf=100 rb=50\n");
    int before = circuit_find_node(ckt, "q1#b");
    assert_true(before > 0);
    ss_error err = {0};
    assert_int_equal(ss_op_solve(ss_test_sv(ckt), NULL, NULL, &err), SS_OK);
    assert_true(ss_test_sv(ckt)->n_nodes > ckt->n_netlist_nodes); /* the BJT made its internal base */
    assert_int_equal(circuit_find_node(ckt, "q1#b"), before);
    assert_int_equal(ss_test_sv(ckt)->node_internal[before], 0);
    ss_test_destroy(&ckt);
}

/* ---- published model cards ---------------------------------------------------------------- */

/* Every card of `text` has the same parameters, given and with the same values (to 1e-15
 * relative: `1f` and `0.001p` are the same number written two ways). */
static void expect_same_cards(const char *text, int n_cards)
{
    ss_circuit *ckt = ss_test_parse(text);
    assert_int_equal(ckt->n_models, n_cards);
    const model *ref = ckt->models[0];
    for (int k = 1; k < n_cards; k++) {
        const model *m = ckt->models[k];
        assert_ptr_equal(m->ops, ref->ops);
        assert_int_equal(m->type, ref->type);
        for (int i = 0; i < ref->ops->n_model_params; i++) {
            if (m->given[i] != ref->given[i])
                print_error("card %s: parameter %s given %d, reference %d\n", m->name,
                            ref->ops->model_params[i].name, m->given[i], ref->given[i]);
            assert_int_equal(m->given[i], ref->given[i]);
            if (m->p[i] != ref->p[i]) /* defaults may be infinite: equal, not close */
                ss_assert_close(m->p[i], ref->p[i], 1e-15, 0);
        }
    }
    assert_int_equal(ckt->n_warnings, 0);
    ss_test_destroy(&ckt);
}

/* A published card in any of the forms model files are written in (common practice): the
 * parenthesised and the bare form, any case, parameters in any order, `+` continuations,
 * SI suffixes (with a unit letter after them), spaces around `=`. */
static void test_published_card_forms(void **state)
{
    (void)state;
    expect_same_cards("bjt cards\n"
                      ".model ref npn is=1e-15 bf=200 vaf=80 cje=2e-12 mje=0.33 tf=4e-10\n"
                      ".model a npn(is=1e-15 bf=200 vaf=80 cje=2p mje=0.33 tf=0.4n)\n"
                      ".MODEL B NPN (IS=1F BF=200\n"
                      "+ VAF=80\n"
                      "+CJE=2E-12 MJE=.33 TF=400P)\n"
                      ".model c npn tf = 400ps mje = 0.33 cje= 2pF vaf =80V bf = 0.2k\n"
                      "+ is = 0.001p\n"
                      ".Model D Npn( Is=1e-15 Bf=200 Vaf=80 Cje=2p Mje=0.33 Tf=0.4n )\n"
                      "v1 a 0 1\nr1 a 0 1k\n",
                      5);
    expect_same_cards("pnp cards\n"
                      ".model ref pnp is=2e-15 bf=150 br=3 rb=10\n"
                      ".model a PNP(IS=2F BF=150 BR=3 RB=10)\n"
                      ".model b pnp\n+ (rb=10 br=3\n+ bf=150 is=2f)\n"
                      "v1 a 0 1\nr1 a 0 1k\n",
                      3);
    expect_same_cards("jfet cards\n"
                      ".model ref njf vto=-2 beta=1.3e-3 lambda=4e-3 cgs=3e-12 cgd=1e-12\n"
                      ".model a NJF(VTO=-2 BETA=1.3M LAMBDA=4M CGS=3P CGD=1P)\n"
                      ".model b njf cgd = 1pf cgs = 3pf\n+ lambda = 0.004 beta=1.3m vto=-2v\n"
                      "v1 a 0 1\nr1 a 0 1k\n",
                      3);
    expect_same_cards("mosfet cards\n"
                      ".model ref nmos level=1 vto=0.8 kp=1.2e-4 lambda=0.02 gamma=0.4\n"
                      ".model a NMOS(LEVEL=1 VTO=0.8 KP=120U LAMBDA=20M GAMMA=0.4)\n"
                      ".model b nmos (gamma = .4\n+ lambda=0.02\n+ kp=120u vto=800mv level=1)\n"
                      "v1 a 0 1\nr1 a 0 1k\n",
                      3);
    expect_same_cards("diode cards\n"
                      ".model ref d is=2.5e-9 n=1.75 rs=0.5 cjo=4e-12 tt=6e-9\n"
                      ".model a D(IS=2.5N N=1.75 RS=.5 CJO=4P TT=6N)\n"
                      ".model b d\n+ tt = 6ns cjo = 4pf\n+ rs = 500m n = 1.75 is = 2.5na\n"
                      "v1 a 0 1\nr1 a 0 1k\n",
                      3);
}

/* Fields that are not model parameters: an error naming them all with the card's line and
 * saying how to accept them; under .options model_extras=warn, one warning per card naming
 * them (in the circuit, and so in every context made from it, as a check of its own); a
 * misspelt parameter stays an error either way, with the nearest parameter as a hint. */
static void test_card_extra_fields(void **state)
{
    (void)state;
    const char *card = ".model qx npn(is=1e-15 bf=200 vceo=45 icrating=100m mfg=acme)\n";
    char text[1024];
    snprintf(text, sizeof text, "t\n%sv1 a 0 1\nr1 a 0 1k\n", card);
    expect_error(text, "test.cir:2: model 'qx': vceo, icrating, mfg are not BJT model parameters "
                       "(ratings or maker's notes? .options model_extras=warn ignores such "
                       "fields with a warning)");
    expect_error("t\n.model dz d is=1n\n+ vpk=100 iave=0.2\nv1 a 0 1\nr1 a 0 1k\n",
                 "test.cir:2: model 'dz': vpk, iave are not diode model parameters (ratings or "
                 "maker's notes? .options model_extras=warn ignores such fields with a warning)");
    expect_error("t\n.model dz d is=1n type=zener\nv1 a 0 1\nr1 a 0 1k\n",
                 "test.cir:2: model 'dz': type is not a diode model parameter (ratings or "
                 "maker's notes? .options model_extras=warn ignores such fields with a warning)");
    /* misspellings: never ignored, with or without the option */
    expect_error("t\n.model qx npn(is=1e-15 bff=200 vaff=80 lamda=1)\nv1 a 0 1\nr1 a 0 1k\n",
                 "test.cir:2: model 'qx': unknown parameters 'bff' (did you mean bf?), 'vaff' "
                 "(did you mean vaf?), 'lamda' for a BJT model");
    expect_error("t\n.options model_extras=warn\n.model jx njf vto=-2 betta=1m lamda=0.01 "
                 "mfg=acme\nv1 a 0 1\nr1 a 0 1k\n",
                 "test.cir:3: model 'jx': unknown parameters 'betta' (did you mean beta?), "
                 "'lamda' (did you mean lambda?) for a JFET model");
    expect_error("t\n.model qx npn bf=200 bff=100 vceo=45\nv1 a 0 1\nr1 a 0 1k\n",
                 "test.cir:2: model 'qx': unknown parameter 'bff' (did you mean bf?) for a BJT "
                 "model; not parameters either: vceo (ratings or maker's notes: .options "
                 "model_extras=warn ignores such fields with a warning)");
    expect_error("t\n.options model_extras=maybe\n.model qx npn vceo=45\nv1 a 0 1\nr1 a 0 1k\n",
                 "test.cir:2: .options: model_extras must be error or warn, got 'maybe'");
    expect_error("t\n.options model_extras=ignore\nv1 a 0 1\nr1 a 0 1k\n",
                 "test.cir:2: .options: model_extras must be error or warn, got 'ignore'");

    /* accepted with the option, wherever the .options line stands (here after the card) */
    snprintf(text, sizeof text,
             "t\n%s.model qy npn bf=100\nv1 a 0 1\nr1 a 0 1k\n.options model_extras = warn\n",
             card);
    ss_circuit *ckt = ss_test_parse(text);
    const char *want = "test.cir:2: model 'qx': ignored vceo, icrating, mfg: not BJT model "
                       "parameters (.options model_extras=warn) [model_extras]";
    assert_int_equal(ckt->n_warnings, 1); /* one per card; the clean card none */
    assert_string_equal(ckt->warnings[0].text, want);
    assert_int_equal(ckt->n_models, 2);
    ss_assert_close(ckt->models[0]->p[model_param_index(ckt->models[0]->ops, "bf")], 200.0, 0,
                    0);
    ss_solver *sv = ss_test_sv(ckt);
    assert_string_equal(ss_solver_warning(sv, 0), want);
    assert_null(ss_solver_warning(sv, 1));
    const char *subject = NULL;
    assert_string_equal(ss_solver_warning_lint(sv, 0, &subject), "model_extras");
    assert_string_equal(subject, "qx");
    int n_lint = -1;
    ss_error err = {0};
    assert_int_equal(ss_lint_run(sv, &n_lint, &err), SS_OK);
    assert_int_equal(n_lint, 1); /* what check --strict counts */
    ss_test_destroy(&ckt);
    /* model_extras=error is the default, said out loud */
    snprintf(text, sizeof text, "t\n.options model_extras=error\n%sv1 a 0 1\nr1 a 0 1k\n", card);
    char msg[1400];
    ss_test_parse_error(text, msg, sizeof msg);
    ss_assert_contains(msg, "test.cir:3: model 'qx': vceo, icrating, mfg are not BJT");
}

/* The edit distance behind the hints: insert, delete, replace, swap two neighbours. */
static void test_name_distance(void **state)
{
    (void)state;
    assert_int_equal(name_distance("bf", "bf"), 0);
    assert_int_equal(name_distance("bff", "bf"), 1);
    assert_int_equal(name_distance("fb", "bf"), 1);
    assert_int_equal(name_distance("lamda", "lambda"), 1);
    assert_int_equal(name_distance("cje", "mjc"), 2);
    assert_int_equal(name_distance("", "vaf"), 3);
    assert_int_equal(name_distance("icrating", "is"), 7);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_si_suffix_meg_is_1e6),
        cmocka_unit_test(test_si_suffix_table),
        cmocka_unit_test(test_bad_values_rejected),
        cmocka_unit_test(test_expr_precedence_and_power),
        cmocka_unit_test(test_expr_functions),
        cmocka_unit_test(test_expr_errors_have_messages),
        cmocka_unit_test(test_expr_nesting_limit),
        cmocka_unit_test(test_continuation_comments_case),
        cmocka_unit_test(test_param_order_free_and_override),
        cmocka_unit_test(test_override_element_and_model_param),
        cmocka_unit_test(test_subckt_nested_with_params),
        cmocka_unit_test(test_include_relative_to_including_file),
        cmocka_unit_test(test_errors_name_line_and_element),
        cmocka_unit_test(test_bjt_substrate_node),
        cmocka_unit_test(test_published_card_forms),
        cmocka_unit_test(test_card_extra_fields),
        cmocka_unit_test(test_name_distance),
        cmocka_unit_test(test_binary_garbage_rejected),
        cmocka_unit_test(test_long_names_are_refused_not_cut),
        cmocka_unit_test(test_internal_node_does_not_shadow_netlist_node),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
