/* The level-1 MOSFET against closed forms: the Shichman-Hodges drain current in saturation
 * and in the linear region for NMOS and PMOS (H. Shichman and D. A. Hodges, IEEE JSSC SC-3,
 * 285, 1968, with the body-effect threshold as P. Antognetti and G. Massobrio, Semiconductor
 * Device Modeling with SPICE, 2nd ed., 1993, ch. 4, write it), gm = sqrt(2 beta Id) in
 * saturation (the derivative of the square law), the AC conductances against finite
 * differences of the DC solution, RD and RS, the noise at a drain, the transient of the overlap
 * capacitances, and the card checks. Bias: beta = KP W/L = 2e-5 * 10 =
 * 2e-4 A/V^2 throughout. The bulk junctions' leakage and gmin (1e-12 S, docs/models.md
 * section 7) add up to ~1e-11 A at these biases: the tolerances allow 1e-7 relative. */
#include "ss_test.h"

static double op_of(const char *text, const char *row)
{
    ss_circuit *ckt = NULL;
    ss_table *op = ss_test_op(text, &ckt);
    double v = ss_test_opval(op, row);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
    return v;
}

#define NMOS_CARD ".model nm nmos (vto=1 kp=2e-5)\n"
#define PMOS_CARD ".model pm pmos (vto=-1 kp=2e-5)\n"

/* Saturation: Id = beta/2 (Vgs - VTO)^2 = 1e-4 * 2^2 = 4e-4 A at Vgs = 3 V, Vds = 5 V;
 * linear: Id = beta (Vgs - VTO - Vds/2) Vds = 2e-4 * 1.5 * 1 = 3e-4 A at Vds = 1 V. */
static void test_nmos_saturation_and_linear(void **state)
{
    (void)state;
    const char *sat = "t\n" NMOS_CARD "vd d 0 5\nvg g 0 3\nm1 d g 0 0 nm w=100u l=10u\n";
    const char *lin = "t\n" NMOS_CARD "vd d 0 1\nvg g 0 3\nm1 d g 0 0 nm w=100u l=10u\n";
    ss_assert_close(op_of(sat, "id(m1)"), 4e-4, 1e-7, 0);
    ss_assert_close(op_of(sat, "region(m1)"), 2.0, 0, 0);
    ss_assert_close(op_of(lin, "id(m1)"), 3e-4, 1e-7, 0);
    ss_assert_close(op_of(lin, "region(m1)"), 1.0, 0, 0);
    /* below threshold: cut-off, only the junction leakage and gmin */
    const char *off = "t\n" NMOS_CARD "vd d 0 5\nvg g 0 0.9\nm1 d g 0 0 nm w=100u l=10u\n";
    ss_assert_close(op_of(off, "id(m1)"), 0.0, 0, 1e-10);
    ss_assert_close(op_of(off, "region(m1)"), 0.0, 0, 0);
}

/* PMOS: the same magnitudes with every voltage and current negated (VTO = -1 V as the book
 * writes an enhancement PMOS): source and bulk at 5 V, gate at 2 V (Vgs = -3 V); drain at 0
 * (saturation, Id = -4e-4 A into the drain) or at 4 V (Vds = -1 V, Id = -3e-4 A). */
static void test_pmos_saturation_and_linear(void **state)
{
    (void)state;
    const char *sat = "t\n" PMOS_CARD "vs s 0 5\nvg g 0 2\nm1 0 g s s pm w=100u l=10u\n";
    const char *lin = "t\n" PMOS_CARD "vs s 0 5\nvg g 0 2\nvd d 0 4\nm1 d g s s pm w=100u "
                      "l=10u\n";
    ss_assert_close(op_of(sat, "id(m1)"), -4e-4, 1e-7, 0);
    ss_assert_close(op_of(sat, "vth(m1)"), -1.0, 1e-15, 0);
    ss_assert_close(op_of(lin, "id(m1)"), -3e-4, 1e-7, 0);
    ss_assert_close(op_of(lin, "region(m1)"), 1.0, 0, 0);
}

/* Body effect: Vth = VTO + GAMMA (sqrt(PHI - Vbs) - sqrt(PHI)) = 1 + 0.5 (sqrt(2.6) -
 * sqrt(0.6)) = 1.4189262... V at Vbs = -2 V; Id = beta/2 (3 - Vth)^2. gmb/gm =
 * GAMMA / (2 sqrt(PHI - Vbs)). */
static void test_body_effect(void **state)
{
    (void)state;
    const char *t = "t\n.model nm nmos (vto=1 kp=2e-5 gamma=0.5 phi=0.6)\nvd d 0 5\nvg g 0 3\n"
                    "vb b 0 -2\nm1 d g 0 b nm w=100u l=10u\n";
    double vth = 1.0 + 0.5 * (sqrt(2.6) - sqrt(0.6));
    ss_assert_close(op_of(t, "vth(m1)"), vth, 1e-14, 0);
    ss_assert_close(op_of(t, "id(m1)"), 1e-4 * (3.0 - vth) * (3.0 - vth), 1e-7, 0);
    ss_assert_close(op_of(t, "gmb(m1)") / op_of(t, "gm(m1)"), 0.5 / (2.0 * sqrt(2.6)), 1e-12, 0);
}

/* gm = sqrt(2 beta Id) in saturation with LAMBDA = 0 (d/dVgs of the square law). */
static void test_gm_square_law(void **state)
{
    (void)state;
    const char *t = "t\n" NMOS_CARD "vd d 0 5\nvg g 0 2.5\nm1 d g 0 0 nm w=100u l=10u\n";
    double id = op_of(t, "id(m1)");
    ss_assert_close(op_of(t, "gm(m1)"), sqrt(2.0 * 2e-4 * id), 1e-7, 0);
    ss_assert_close(op_of(t, "gm(m1)"), 2e-4 * 1.5, 1e-12, 0);
}

/* A common-source stage with a 10 kohm drain load and a bulk source: the AC gain at 1 Hz (no
 * capacitances) from the gate, the bulk and the supply must be the derivative of the DC
 * solution v(d) with respect to each source's value, taken by central differences (h = 1 mV;
 * the O(h^2) error of the quadratic law is far below the tolerance). */
static double dc_vd(ss_solver *sv, const char *src, double value)
{
    ss_error err = {0};
    assert_int_equal(ss_solver_set_value(sv, src, value, &err), SS_OK);
    ss_table *op = NULL;
    assert_int_equal(ss_op_solve(sv, &op, NULL, &err), SS_OK);
    double v = ss_test_opval(op, "v(d)");
    ss_table_destroy(&op);
    return v;
}

static double ac_vd(const char *text, const char *ac_src)
{
    char buf[600];
    /* the three %s of text: vdd, vg, vb */
    snprintf(buf, sizeof buf, text, strcmp(ac_src, "vdd") == 0 ? "ac 1" : "",
             strcmp(ac_src, "vg") == 0 ? "ac 1" : "", strcmp(ac_src, "vb") == 0 ? "ac 1" : "");
    ss_circuit *ckt = ss_test_parse(buf);
    ss_error err = {0};
    const char *names[] = {"d"};
    assert_int_equal(ss_solver_select_nodes(ss_test_sv(ckt), names, 1, &err), SS_OK);
    ss_table *ac = NULL;
    assert_int_equal(ss_ac_sweep_run(ss_test_sv(ckt), &ac, &err), SS_OK);
    double mag = ss_table_get(ac, 0, 1), ph = ss_table_get(ac, 0, 2);
    ss_table_destroy(&ac);
    ss_test_destroy(&ckt);
    return mag * cos(ph * 3.14159265358979323846 / 180.0);
}

static void test_ac_against_dc_differences(void **state)
{
    (void)state;
    static const char *const regions[2] = {"3", "6"}; /* saturation, then linear (Vgs = 6) */
    for (int r = 0; r < 2; r++) {
        char text[600];
        snprintf(text, sizeof text,
                 "t\n.model nm nmos (vto=1 kp=2e-5 gamma=0.5 phi=0.6 lambda=0.02)\n"
                 "vdd vdd 0 10 %%s\nvg g 0 %s %%s\nvb b 0 -1 %%s\nrd vdd d 10k\n"
                 "m1 d g 0 b nm w=100u l=10u\n.ac dec 1 1 1\n",
                 regions[r]);
        char plain[600];
        snprintf(plain, sizeof plain, text, "", "", "");
        ss_circuit *ckt = ss_test_parse(plain);
        ss_solver *sv = ss_test_sv(ckt);
        static const char *const src[3] = {"vg", "vb", "vdd"};
        const double v0[3] = {r == 0 ? 3.0 : 6.0, -1.0, 10.0};
        const double h = 1e-3;
        for (int k = 0; k < 3; k++) {
            double up = dc_vd(sv, src[k], v0[k] + h), dn = dc_vd(sv, src[k], v0[k] - h);
            ss_solver_reset_values(sv);
            double fd = (up - dn) / (2.0 * h);
            ss_assert_close(ac_vd(text, src[k]), fd, 1e-5, 1e-9);
        }
        ss_test_destroy(&ckt);
    }
}

/* Output noise of a common-source stage at its drain (docs/noise.md): the current PSDs at d
 * are the channel's (8/3) k T gm (van der Ziel 1986, from memory), RD's 4 k T / RD (Johnson
 * 1928; Nyquist 1928), the bulk-drain junction's shot noise 2 q |IS (exp(Vbd/Vt) - 1)|
 * (Schottky 1918; Vbd = -Vd, so 2 q IS) and the flicker KF Id^AF / (f COX L^2) with
 * COX = 3.9 eps0 / TOX (the classic normalisation); the drain sees RD || 1/(gds + gmin). The
 * gate is held by an ideal source and the junction capacitances are absent, so the density is
 * sqrt(PSD) times that resistance at every frequency. k exact (SI 2019), 27 C = 300.15 K. */
static void test_noise_at_the_drain(void **state)
{
    (void)state;
    const char *t = "t\n.model nm nmos (vto=1 kp=2e-5 lambda=0.02 kf=1e-28 af=1.2 tox=50n)\n"
                    "vdd vdd 0 10\nvg g 0 3 ac 1\nrd vdd d 10k\nm1 d g 0 0 nm w=100u l=10u\n"
                    ".ac dec 1 10 1meg\n.noise v(d) vg\n";
    ss_circuit *ckt = NULL;
    ss_table *op = ss_test_op(t, &ckt);
    double gm = ss_test_opval(op, "gm(m1)"), gds = ss_test_opval(op, "gds(m1)");
    double vd = ss_test_opval(op, "v(d)"), id = (10.0 - vd) / 10e3;
    ss_table_destroy(&op);
    ss_table *noise = NULL;
    ss_error err = {0};
    assert_int_equal(ss_noise_run(ss_test_sv(ckt), &noise, NULL, NULL, &err), SS_OK);
    const double k_t = 1.380649e-23 * 300.15, q = 1.602176634e-19;
    const double cox = 3.9 * 8.854187817e-12 / 50e-9;
    double z = 1.0 / (1.0 / 10e3 + gds + 1e-12);
    /* flicker dominates at 10 Hz (1.4e-20 A^2/Hz against 6.5e-24), thermal at 1 MHz */
    for (int row = 0; row < 6; row++) {
        double f = pow(10.0, row + 1);
        double psd = 8.0 / 3.0 * k_t * gm + 4.0 * k_t / 10e3 + 2.0 * q * 1e-14 +
                     1e-28 * pow(id, 1.2) / (f * cox * 10e-6 * 10e-6);
        ss_assert_close(ss_table_get(noise, row, 0), f, 1e-12, 0);
        ss_assert_close(ss_table_get(noise, row, 1), sqrt(psd) * z, 1e-7, 0);
    }
    ss_table_destroy(&noise);
    ss_test_destroy(&ckt);
}

/* Transient: with the channel off (gate below VTO) and drain, source and bulk grounded, the
 * gate is the overlap capacitance CGSO W + CGDO W + CGBO L = 0.5 + 0.3 + 0.2 = 1 pF; driven
 * through 1 Mohm by a 1 ns ramp to 0.5 V it is the first-order RC of test_tran.c:
 * v(t) = V (1 - (tau/tr) (exp(tr/tau) - 1) exp(-t/tau)), tau = 1 us (standard circuit
 * theory, from memory). */
static void test_tran_overlap_rc(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("t\n.model nm nmos (vto=1 cgso=5n cgdo=3n cgbo=20n)\n"
                                    "v1 in 0 pulse(0 0.5 0 1n)\nr1 in g 1meg\n"
                                    "m1 0 g 0 0 nm w=100u l=10u\n.tran 0.1u 5u\n");
    ss_table *t = NULL;
    ss_error err = {0};
    assert_int_equal(ss_tran_run(ss_test_sv(ckt), &t, &err), SS_OK);
    int col = -1;
    for (int c = 0; c < ss_table_cols(t); c++)
        if (strcmp(ss_table_col_name(t, c), "v(g)") == 0)
            col = c;
    assert_true(col > 0);
    double tau = 1e-6, tr = 1e-9, worst = 0.0;
    for (int k = 1; k < ss_table_rows(t); k++) {
        double time = ss_table_get(t, k, 0);
        double expect = 0.5 * (1.0 - tau / tr * expm1(tr / tau) * exp(-time / tau));
        worst = fmax(worst, fabs(ss_table_get(t, k, col) - expect));
    }
    assert_true(worst <= 5e-4 * 0.5);
    ss_table_destroy(&t);
    ss_test_destroy(&ckt);
}

/* RD and RS as internal nodes: with RS = 1 kOhm the saturation law reads
 * Id = beta/2 (Vg - Id RS - VTO)^2, i.e. 0.1 u^2 + u - 2 = 0 for u = 2 - 1000 Id, so
 * u = (sqrt(1.8) - 1)/0.2 and Id = (2 - u)/1000 = 2.9179607e-4 A; RD = 500 ohm leaves the
 * device in saturation (Vds' = 5 - 1500 Id > u). */
static void test_series_resistances(void **state)
{
    (void)state;
    const char *t = "t\n.model nm nmos (vto=1 kp=2e-5 rd=500 rs=1k)\nvd d 0 5\nvg g 0 3\n"
                    "m1 d g 0 0 nm w=100u l=10u\n";
    double u = (sqrt(1.8) - 1.0) / 0.2;
    ss_assert_close(op_of(t, "id(m1)"), (2.0 - u) / 1000.0, 1e-7, 0);
    ss_assert_close(op_of(t, "vds(m1)"), 5.0, 1e-15, 0); /* at the terminals */
    ss_assert_close(op_of(t, "region(m1)"), 2.0, 0, 0);
}

static void expect_error(const char *text, const char *want)
{
    char msg[1400];
    ss_test_parse_error(text, msg, sizeof msg);
    if (strcmp(msg, want) != 0) {
        print_error("got  %s\nwant %s\n", msg, want);
        fail();
    }
}

/* Only the square law is built in; KP and PHI must be positive (the equations scale by KP and
 * take the square root of PHI - Vbs); W and L must be positive. */
static void test_card_checks(void **state)
{
    (void)state;
    expect_error("t\n.model nm nmos level=2\nm1 d g 0 0 nm\nvd d 0 1\n",
                 "test.cir:2: model 'nm': level 2 is not supported (only level=1 is)");
    expect_error("t\n.model nm nmos kp=0\nm1 d g 0 0 nm\nvd d 0 1\n",
                 "test.cir:2: model 'nm': kp must be positive, got 0");
    expect_error("t\n.model nm nmos phi=-0.6\nm1 d g 0 0 nm\nvd d 0 1\n",
                 "test.cir:2: model 'nm': phi must be positive, got -0.6");
    expect_error("t\n.model nm nmos\nm1 d g 0 0 nm w=0\nvd d 0 1\n",
                 "test.cir:3: m1: W must be positive, got 0");
    expect_error("t\n.model nm nmos\nm1 d g 0 0 nm q=1\nvd d 0 1\n",
                 "test.cir:3: m1: unexpected 'q=' (expected w= and l=, once each)");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_nmos_saturation_and_linear),
        cmocka_unit_test(test_pmos_saturation_and_linear),
        cmocka_unit_test(test_body_effect),
        cmocka_unit_test(test_gm_square_law),
        cmocka_unit_test(test_ac_against_dc_differences),
        cmocka_unit_test(test_noise_at_the_drain),
        cmocka_unit_test(test_tran_overlap_rc),
        cmocka_unit_test(test_series_resistances),
        cmocka_unit_test(test_card_checks),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
