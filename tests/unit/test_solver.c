/* Operating point: linear closed forms, device equations against their published closed
 * forms, temperature laws, fallbacks (gmin/source stepping), KCL verification, topology
 * errors. Sources are named beside each expected value. */
#include "ss_test.h"

#include "analysis/analysis.h"
#include "netlist/circuit.h"

/* Thermal voltage kT/q at 300.15 K with the exact 2019-SI k and q (CODATA 2018):
 * 0.025864925786 V, computed. */
#define VT_300_15 0.025864925786 /* rounded: tests use thermal_voltage_v(300.15) */

static void test_divider_closed_form(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("divider\nv1 in 0 12\nr1 in mid 82k\nr2 mid 0 15k\n", &ckt);
    /* V * R2 / (R1 + R2): voltage divider, standard circuit theory */
    ss_assert_close(ss_test_opval(op, "v(mid)"), 12.0 * 15.0 / 97.0, 1e-12, 0);
    /* i(V) enters the + node: the source delivers, so it is negative */
    ss_assert_close(ss_test_opval(op, "i(v1)"), -12.0 / 97e3, 1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

static void test_superposition_two_sources(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op =
        ss_test_op("superposition\nv1 a 0 5\ni1 0 m 2m\nr1 a m 1k\nr2 m 0 4k\n", &ckt);
    /* superposition: 5 V * 4/5 + 2 mA * (1k || 4k) = 4 + 1.6 = 5.6 V */
    ss_assert_close(ss_test_opval(op, "v(m)"), 5.6, 1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

static void test_controlled_sources_closed_form(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("controlled sources\n"
                              "v1 in 0 0.5\n"
                              "e1 oe 0 in 0 10\nrl1 oe 0 1k\n"
                              "g1 0 og in 0 2m\nrl2 og 0 1k\n"
                              "vs in2 0 0\nr5 in2x in2 1\nv2 in2x 0 1m\n"
                              "f1 0 of vs 3\nrl3 of 0 1k\n"
                              "h1 oh 0 vs 500\nrl4 oh 0 1k\n",
                              &ckt);
    ss_assert_close(ss_test_opval(op, "v(oe)"), 5.0, 1e-12, 0);  /* mu * vin */
    ss_assert_close(ss_test_opval(op, "v(og)"), 1.0, 1e-12, 0);  /* gm * vin * RL */
    /* i(vs) = current into vs's + node: 1 mV across 1 ohm flows in2x -> in2 -> vs: +1 mA */
    ss_assert_close(ss_test_opval(op, "i(vs)"), 1e-3, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "v(of)"), 3e-3 * 1e3, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "v(oh)"), 500.0 * 1e-3, 1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* Diode with series resistor: Banwell & Jayakumar, Electronics Letters 36(4), 2000, Lambert-W
 * closed form, values computed with scipy (V 5, R 1k, IS 1e-14, N 1 and 2, 300.15 K). */
static void test_diode_series_r_lambert_w(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("diode\n.model dx d is=1e-14\nv1 a 0 5\nr1 a k 1k\nd1 k 0 dx\n",
                              &ckt);
    ss_assert_close(ss_test_opval(op, "id(d1)"), 4.30711216762e-3, 1e-9, 0);
    ss_assert_close(ss_test_opval(op, "v(k)"), 0.692887832, 1e-8, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
    op = ss_test_op("diode n2\n.model dx d is=1e-14 n=2\nv1 a 0 5\nr1 a k 1k\nd1 k 0 dx\n", &ckt);
    ss_assert_close(ss_test_opval(op, "id(d1)"), 3.62316938285e-3, 1e-9, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

static void test_thermal_voltage_from_codata(void **state)
{
    (void)state;
    ss_circuit *ckt;
    /* current-driven diode: V = N Vt ln(I/IS + 1) (Shockley 1949); gmin 0 to keep it exact */
    ss_table *op = ss_test_op("vt\n.options gmin=0\n.model dx d is=1e-14\n"
                              "i1 0 a 1m\nd1 a 0 dx\n",
                              &ckt);
    ss_assert_close(ss_test_opval(op, "v(a)"), thermal_voltage_v(300.15) * log(1e-3 / 1e-14 + 1.0), 1e-12, 0);
    ss_assert_close(thermal_voltage_v(300.15), VT_300_15, 1e-10, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* Saturation current temperature law, check value IS(350.15 K) = 7.28045000e-12 A for
 * IS 1e-14, XTI 3, EG 1.11, TNOM 27 C (computed from the tabulated law, docs/models.md). */
static void test_is_temperature_law(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("is(t)\n.temp 77\n.options gmin=0\n.model dx d is=1e-14\n"
                              "i1 0 a 1m\nd1 a 0 dx\n",
                              &ckt);
    double vt = thermal_voltage_v(350.15);
    ss_assert_close(ss_test_opval(op, "v(a)"), vt * log(1e-3 / 7.28045000e-12 + 1.0), 1e-8, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* Ebers-Moll transport form (Ebers & Moll 1954) with the Early factor of the Gummel-Poon q1
 * (qb = q1 = 1/(1 - Vbc/VAF) when VAR, IKF, IKR are infinite):
 * IC = (IS(e^(Vbe/Vt) - e^(Vbc/Vt)))(1 - Vbc/VAF) - IS/BR (e^(Vbc/Vt) - 1). */
static void test_bjt_transport_closed_form(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("em\n.options gmin=0\n.model qx npn is=1e-15 bf=150 br=3 vaf=80\n"
                              "vb b 0 0.68\nvc c 0 5\nq1 c b 0 qx\n",
                              &ckt);
    double vt = thermal_voltage_v(300.15), vbe = 0.68, vbc = 0.68 - 5.0, is = 1e-15;
    double i_f = is * expm1(vbe / vt), i_r = is * expm1(vbc / vt);
    double ic = (i_f - i_r) * (1.0 - vbc / 80.0) - i_r / 3.0;
    double ib = i_f / 150.0 + i_r / 3.0;
    ss_assert_close(ss_test_opval(op, "ic(q1)"), ic, 1e-10, 0);
    ss_assert_close(ss_test_opval(op, "ib(q1)"), ib, 1e-10, 0);
    ss_assert_close(ss_test_opval(op, "vbe(q1)"), 0.68, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "vce(q1)"), 5.0, 1e-12, 0);
    /* gm = dIC/dVbe = (IS/Vt) e^(Vbe/Vt) (1 - Vbc/VAF) */
    ss_assert_close(ss_test_opval(op, "gm(q1)"), is / vt * exp(vbe / vt) * (1.0 - vbc / 80.0),
                    1e-10, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

static void test_pnp_currents_are_negative(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("pnp\n.options gmin=0\n.model qp pnp is=1e-15 bf=120\n"
                              "ve e 0 5\nvb b 0 4.32\nq1 0 b e qp\n",
                              &ckt);
    double vt = thermal_voltage_v(300.15);
    double i_f = 1e-15 * expm1(0.68 / vt);
    double i_r = 1e-15 * expm1(-4.32 / vt);
    ss_assert_close(ss_test_opval(op, "ic(q1)"), -((i_f - i_r) - i_r), 1e-10, 0);
    ss_assert_close(ss_test_opval(op, "ib(q1)"), -(i_f / 120.0 + i_r), 1e-10, 0);
    ss_assert_close(ss_test_opval(op, "vbe(q1)"), -0.68, 1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* A CE stage forced through the fallbacks: three Newton iterations are too few for plain
 * Newton from zero, so gmin stepping must finish the job with the same answer. */
static const char *CE_STAGE = "ce\n.model qn npn is=2e-15 bf=180 vaf=90\n"
                              "vcc vcc 0 12\nr1 vcc b 82k\nr2 b 0 15k\nrc vcc c 4.7k\n"
                              "re e 0 1k\nq1 c b e qn\n";

static void test_gmin_stepping_reaches_same_answer(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op(CE_STAGE, &ckt);
    double vc = ss_test_opval(op, "v(c)");
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
    char text[1024];
    snprintf(text, sizeof text, "%s.options newton_iters=4\n", CE_STAGE);
    ckt = ss_test_parse(text);
    ss_op_stats stats;
    ss_error err = {0};
    assert_int_equal(ss_op_solve(ss_test_sv(ckt), &op, &stats, &err), SS_OK);
    assert_true(stats.gmin_steps > 0 || stats.source_steps > 0);
    ss_assert_close(ss_test_opval(op, "v(c)"), vc, 1e-9, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* A device whose Newton stamps disagree with its own current equation: the converged
 * answer must be refused by the KCL verification. */
static void broken_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *r)
{
    (void)lc;
    double i_a = 2.0 * (xv(x, e->node[0]) - xv(x, e->node[1])) / e->value; /* wrong: 2x */
    rhs_add(r, e->node[0], i_a);
    rhs_add(r, e->node[1], -i_a);
}

static void test_kcl_verification_catches_inconsistent_stamp(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("kcl\nv1 a 0 1\nr1 a b 1k\nr2 b 0 1k\n");
    static dev_ops broken;
    broken = *ss_test_sv(ckt)->elem[2].ops;
    broken.kcl = broken_kcl;
    ss_test_sv(ckt)->elem[2].ops = &broken;
    ss_table *op = NULL;
    ss_error err = {0};
    assert_int_equal(ss_op_solve(ss_test_sv(ckt), &op, NULL, &err), SS_ERR_NO_CONVERGENCE);
    assert_null(op);
    ss_assert_contains(err.message, "fails Kirchhoff's law at node 'b'");
    ss_test_destroy(&ckt);
}

/* A resistor whose own current equation is right up to 0.75 V across it and twice too large
 * above: a sweep that starts below passes the operating point's check, then moves past it. */
static void kcl_wrong_above(const element *e, const double *x, const dev_load_ctx *lc, double *r)
{
    (void)lc;
    double v = xv(x, e->node[0]) - xv(x, e->node[1]);
    double i_a = (fabs(v) > 0.75 ? 2.0 : 1.0) * v / e->value;
    rhs_add(r, e->node[0], i_a);
    rhs_add(r, e->node[1], -i_a);
}

/* Every .dc point, not only the first (a full operating point), passes the Kirchhoff check;
 * the refusal names the sweep value and the node. The swept source's own value is untouched. */
static void test_dc_sweep_points_are_kcl_verified(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("kcl sweep\nv1 a 0 1\nr1 a b 1k\nr2 b 0 1k\n.dc v1 1 3 1\n");
    ss_solver *sv = ss_test_sv(ckt);
    static dev_ops broken;
    broken = *sv->elem[2].ops;
    broken.kcl = kcl_wrong_above;
    sv->elem[2].ops = &broken;
    ss_table *dc = NULL;
    ss_error err = {0};
    assert_int_equal(ss_dc_sweep_run(sv, &dc, &err), SS_ERR_NO_CONVERGENCE);
    assert_null(dc);
    ss_assert_contains(err.message, ".dc at v1 = 2: ");
    ss_assert_contains(err.message, "fails Kirchhoff's law at node 'b'");
    ss_assert_close(sv->elem[0].value, 1.0, 0, 0);
    ss_test_destroy(&ckt);
}

static void expect_op_error(const char *text, ss_status code, const char *message)
{
    ss_circuit *ckt = ss_test_parse(text);
    ss_table *op = NULL;
    ss_error err = {0};
    assert_int_equal(ss_op_solve(ss_test_sv(ckt), &op, NULL, &err), code);
    char buf[1400];
    ss_error_format(&err, buf, sizeof buf);
    if (strcmp(buf, message) != 0) {
        print_error("got      '%s'\nexpected '%s'\n", buf, message);
        fail();
    }
    ss_test_destroy(&ckt);
}

static void test_topology_errors_named(void **state)
{
    (void)state;
    expect_op_error("float\nv1 a 0 1\nr1 a 0 1k\nc1 a b 1u\nr2 b c 1k\n", SS_ERR_SINGULAR,
                    "test.cir:4: node 'b' has no DC path to ground (it connects only through "
                    "capacitors, current sources or controlling inputs; see c1)");
    expect_op_error("loop\nv1 a 0 1\nv2 a 0 2\nr1 a 0 1k\n", SS_ERR_SINGULAR,
                    "test.cir:3: v2: closes a loop of voltage sources and inductors between "
                    "nodes 'a' and '0' (the loop's current is undetermined at DC)");
    expect_op_error("l loop\nv1 a 0 1\nl1 a 0 1m\n", SS_ERR_SINGULAR,
                    "test.cir:3: l1: closes a loop of voltage sources and inductors between "
                    "nodes 'a' and '0' (the loop's current is undetermined at DC)");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_divider_closed_form),
        cmocka_unit_test(test_superposition_two_sources),
        cmocka_unit_test(test_controlled_sources_closed_form),
        cmocka_unit_test(test_diode_series_r_lambert_w),
        cmocka_unit_test(test_thermal_voltage_from_codata),
        cmocka_unit_test(test_is_temperature_law),
        cmocka_unit_test(test_bjt_transport_closed_form),
        cmocka_unit_test(test_pnp_currents_are_negative),
        cmocka_unit_test(test_gmin_stepping_reaches_same_answer),
        cmocka_unit_test(test_kcl_verification_catches_inconsistent_stamp),
        cmocka_unit_test(test_dc_sweep_points_are_kcl_verified),
        cmocka_unit_test(test_topology_errors_named),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
