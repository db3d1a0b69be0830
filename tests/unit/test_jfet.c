/* The JFET (src/devices/jfet.c) against closed forms of the Shichman-Hodges equations
 * (H. Shichman, D. A. Hodges, IEEE JSSC SC-3, 1968, in the parameterisation of P. Antognetti,
 * G. Massobrio, Semiconductor Device Modeling with SPICE, 2nd ed., 1993, JFET chapter) and of
 * the Shockley gate junctions (W. Shockley, Bell Syst. Tech. J. 28, 1949), each biased by ideal
 * sources so that the terminal voltages are exact; its linearisation (AC) against finite
 * differences of the DC solution; its channel noise against (8/3) k T gm. */
#include "ss_test.h"

#define K_BOLTZMANN 1.380649e-23   /* J/K, exact (SI 2019) */
#define Q_ELECTRON 1.602176634e-19 /* C, exact (SI 2019) */
#define T_DEFAULT_K 300.15         /* 27 C */
#define GMIN 1e-12                 /* S, the default .options gmin */

static double vt(void) { return K_BOLTZMANN * T_DEFAULT_K / Q_ELECTRON; }

/* Shockley gate junction with GMIN across it, IS 1e-14 A, N 1 (the defaults) */
static double gate_diode(double v) { return 1e-14 * expm1(v / vt()) + GMIN * v; }

/* Saturation, N-channel: VTO -2 V, BETA 1 mA/V^2, LAMBDA 0.02 1/V, Vgs -1 V, Vds 10 V.
 * Id = BETA (1 + LAMBDA Vds) (Vgs - VTO)^2 = 1.2 mA (Shichman-Hodges); the drain terminal also
 * carries minus the gate-drain junction current at Vgd = -11 V. gm = 2 BETA (1 + LAMBDA Vds)
 * (Vgs - VTO) = 2.4 mS, gds = BETA LAMBDA (Vgs - VTO)^2 = 20 uS. */
static void test_njf_saturation(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("njf sat\n.model nj njf vto=-2 beta=1m lambda=0.02\n"
                              "vd d 0 10\nvg g 0 -1\nj1 d g 0 nj\n",
                              &ckt);
    double ids = 1e-3 * (1.0 + 0.02 * 10.0) * 1.0;
    ss_assert_close(ss_test_opval(op, "id(j1)"), ids - gate_diode(-11.0), 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "ig(j1)"), gate_diode(-1.0) + gate_diode(-11.0), 1e-9, 0);
    ss_assert_close(ss_test_opval(op, "gm(j1)"), 2.4e-3, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "gds(j1)"), 2e-5, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "vgs(j1)"), -1.0, 0, 1e-15);
    ss_assert_close(ss_test_opval(op, "vds(j1)"), 10.0, 0, 1e-15);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* Linear region, N-channel: VTO -2 V, BETA 1 mA/V^2, LAMBDA 0.02, Vgs -0.5 V, Vds 1 V
 * (< Vgs - VTO = 1.5 V): Id = BETA (1 + LAMBDA Vds) Vds (2 (Vgs - VTO) - Vds) = 2.04 mA,
 * gm = 2 BETA (1 + LAMBDA Vds) Vds = 2.04 mS, gds = 2 BETA (1 + LAMBDA Vds) (Vgs - VTO - Vds)
 * + BETA LAMBDA Vds (2 (Vgs - VTO) - Vds) = 1.06 mS (the derivatives of Shichman-Hodges). */
static void test_njf_linear(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("njf lin\n.model nj njf vto=-2 beta=1m lambda=0.02\n"
                              "vd d 0 1\nvg g 0 -0.5\nj1 d g 0 nj\n",
                              &ckt);
    ss_assert_close(ss_test_opval(op, "id(j1)"), 2.04e-3 - gate_diode(-1.5), 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "gm(j1)"), 2.04e-3, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "gds(j1)"), 1.02e-3 + 1e-3 * 0.02 * 2.0, 1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* P-channel: every terminal voltage and current reversed. Saturation at Vgs +1 V, Vds -10 V
 * (N-channel sense Vgs -1, Vds 10): Id into the drain = -1.2 mA; linear at Vgs +0.5 V,
 * Vds -1 V: Id = -2.04 mA (the two N-channel cases above, reflected). */
static void test_pjf_saturation_and_linear(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("pjf\n.model pj pjf vto=-2 beta=1m lambda=0.02\n"
                              "vd d 0 -10\nvg g 0 1\nj1 d g 0 pj\n"
                              "vd2 d2 0 -1\nvg2 g2 0 0.5\nj2 d2 g2 0 pj\n",
                              &ckt);
    ss_assert_close(ss_test_opval(op, "id(j1)"), -(1.2e-3 - gate_diode(-11.0)), 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "gm(j1)"), 2.4e-3, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "id(j2)"), -(2.04e-3 - gate_diode(-1.5)), 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "i(vd)"), 1.2e-3 - gate_diode(-11.0), 1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* gm = 2 sqrt(BETA Id) in saturation with LAMBDA = 0 (Shichman-Hodges: Id = BETA (Vgs - VTO)^2,
 * gm = 2 BETA (Vgs - VTO)). VTO -2, BETA 1 mA/V^2, Vgs -0.7 V: Id = 1.69 mA, gm = 2.6 mS. Area 2
 * doubles BETA, so Id and gm double. */
static void test_gm_is_two_sqrt_beta_id(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("gm\n.model nj njf vto=-2 beta=1m\n"
                              "vd d 0 5\nvg g 0 -0.7\nj1 d g 0 nj\nj2 d g 0 nj 2\n",
                              &ckt);
    double id = ss_test_opval(op, "id(j1)") + gate_diode(-5.7); /* the channel's part */
    ss_assert_close(id, 1.69e-3, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "gm(j1)"), 2.0 * sqrt(1e-3 * id), 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "gm(j1)"), 2.6e-3, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "gm(j2)"), 5.2e-3, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "id(j2)"), 2 * 1.69e-3 - 2e-14 * expm1(-5.7 / vt()) -
                                                     GMIN * -5.7,
                    1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* Gate junction current: the gate forward-biased at 0.6 V with the drain at 10 V.
 * Ig = IS (exp(0.6/Vt) - 1) + GMIN 0.6 + IS (exp(-9.4/Vt) - 1) - GMIN 9.4 (Shockley 1949, IS
 * 1e-14 A, N 1, Vt = k T / q at 300.15 K); with N = 2 the exponent halves. */
static void test_gate_diode_current(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("gate\n.model nj njf vto=-2 beta=1m\n.model nj2 njf n=2\n"
                              "vd d 0 10\nvg g 0 0.6\nj1 d g 0 nj\nj2 d g 0 nj2\n",
                              &ckt);
    double ig = gate_diode(0.6) + gate_diode(-9.4);
    ss_assert_close(ss_test_opval(op, "ig(j1)"), ig, 1e-12, 0);
    double ig2 = 1e-14 * expm1(0.6 / (2.0 * vt())) + GMIN * 0.6 +
                 1e-14 * expm1(-9.4 / (2.0 * vt())) - GMIN * 9.4;
    ss_assert_close(ss_test_opval(op, "ig(j2)"), ig2, 1e-12, 0);
    ss_assert_close(ss_test_opval(op, "i(vg)"), -(ig + ig2), 1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

/* Reverse Vds: source/drain symmetry (Antognetti & Massobrio, JFET chapter: the inverse mode
 * is the normal one with drain and source exchanged). j2 is j1 with drain and source
 * exchanged: its drain current is j1's source current. */
static void test_reverse_vds_is_symmetric(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *op = ss_test_op("sym\n.model nj njf vto=-2 beta=1m lambda=0.02\n"
                              "vd d 0 0.5\nvg g 0 -0.5\nj1 d g 0 nj\nj2 0 g d nj\n",
                              &ckt);
    double i1 = ss_test_opval(op, "id(j1)"), i2 = ss_test_opval(op, "id(j2)");
    /* j2's drain is ground: its drain current is minus j1's source current */
    ss_assert_close(i2, -(i1 + ss_test_opval(op, "ig(j1)")), 1e-12, 0);
    /* j2's channel current is -f(Vgd, -Vds) with f j1's: dId/dVds = gm + gds of j1 */
    ss_assert_close(ss_test_opval(op, "gds(j2)"),
                    ss_test_opval(op, "gm(j1)") + ss_test_opval(op, "gds(j1)"), 1e-12, 0);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

static double v_node(const char *text, const char *node)
{
    ss_circuit *ckt;
    ss_table *op = ss_test_op(text, &ckt);
    char label[64];
    snprintf(label, sizeof label, "v(%s)", node);
    double v = ss_test_opval(op, label);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
    return v;
}

static void ac_gain(const char *text, const char *node, double *mag, double *phase)
{
    ss_circuit *ckt = ss_test_parse(text);
    ss_table *ac = NULL;
    ss_error err = {0};
    assert_int_equal(ss_ac_sweep_run(ss_test_sv(ckt), &ac, &err), SS_OK);
    char col[64];
    snprintf(col, sizeof col, "vm(%s)", node);
    for (int c = 0; c < ss_table_cols(ac); c++)
        if (strcmp(ss_table_col_name(ac, c), col) == 0) {
            *mag = ss_table_get(ac, 0, c);
            *phase = ss_table_get(ac, 0, c + 1);
        }
    ss_table_destroy(&ac);
    ss_test_destroy(&ckt);
}

/* The AC linearisation (gm, gds, the gate conductances) against central differences of the DC
 * solution: a common-source stage with a 4.7 kOhm drain resistor and RD, RS, LAMBDA, in
 * saturation and (supply lowered) in the linear region. dV(d)/dVG and dV(d)/dVDD of the DC
 * solution are the small-signal gains the AC sweep must give at a frequency where no
 * capacitance acts (none given). */
static void test_ac_against_dc_differences(void **state)
{
    (void)state;
    static const char *const fmt =
        "cs\n.model nj njf vto=-2 beta=1m lambda=0.02 rd=20 rs=15\n"
        "vdd dd 0 %.17g ac %d\nrl dd d 4.7k\nvg g 0 %.17g ac %d\nj1 d g 0 nj\n"
        ".ac oct 1 1k 2k\n";
    const double vdds[2] = {12.0, 3.0}; /* saturation, linear */
    for (int k = 0; k < 2; k++) {
        char text[512];
        const double h = 1e-4;
        snprintf(text, sizeof text, fmt, vdds[k], 0, -1.0 + h, 0);
        double vp = v_node(text, "d");
        snprintf(text, sizeof text, fmt, vdds[k], 0, -1.0 - h, 0);
        double vm = v_node(text, "d");
        double dvg = (vp - vm) / (2.0 * h);
        snprintf(text, sizeof text, fmt, vdds[k] + h, 0, -1.0, 0);
        vp = v_node(text, "d");
        snprintf(text, sizeof text, fmt, vdds[k] - h, 0, -1.0, 0);
        vm = v_node(text, "d");
        double dvdd = (vp - vm) / (2.0 * h);
        double mag, ph;
        snprintf(text, sizeof text, fmt, vdds[k], 0, -1.0, 1);
        ac_gain(text, "d", &mag, &ph);
        ss_assert_close(mag, fabs(dvg), 1e-6, 0);
        ss_assert_close(fabs(ph), 180.0, 0, 1e-6);
        snprintf(text, sizeof text, fmt, vdds[k], 1, -1.0, 0);
        ac_gain(text, "d", &mag, &ph);
        ss_assert_close(mag, dvdd, 1e-6, 0);
        ss_assert_close(ph, 0.0, 0, 1e-6);
    }
}

/* Channel thermal noise (8/3) k T gm (the classic JFET noise model, Antognetti & Massobrio
 * 1993, from memory): the gate held by an ideal source, the drain current read through a 0 V
 * source and a 1-ohm transresistance. VTO -2, BETA 1 mA/V^2, Vgs -1 V: gm = 2 mS, output
 * sqrt(8/3 k T gm) = sqrt(8/3 * 1.380649e-23 * 300.15 * 2e-3) V/rtHz, input-referred
 * sqrt(8 k T / (3 gm)). */
static void test_channel_thermal_noise(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("jn\n.model nj njf vto=-2 beta=1m\nvg g 0 dc -1 ac 1\n"
                                    "vdd dd 0 10\nvm dd d 0\nj1 d g 0 nj\nh1 out 0 vm 1\n"
                                    ".ac dec 1 1k 10k\n.noise v(out) vg\n");
    ss_table *noise = NULL, *summary = NULL, *contrib = NULL;
    ss_error err = {0};
    assert_int_equal(ss_noise_run(ss_test_sv(ckt), &noise, &summary, &contrib, &err), SS_OK);
    double kt = K_BOLTZMANN * T_DEFAULT_K, gm = 2e-3;
    for (int k = 0; k < 2; k++) {
        ss_assert_close(ss_table_get(noise, k, 1), sqrt(8.0 / 3.0 * kt * gm), 1e-9, 0);
        ss_assert_close(ss_table_get(noise, k, 2), sqrt(8.0 * kt / (3.0 * gm)), 1e-9, 0);
    }
    ss_table_destroy(&noise);
    ss_table_destroy(&summary);
    ss_table_destroy(&contrib);
    ss_test_destroy(&ckt);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_njf_saturation),
        cmocka_unit_test(test_njf_linear),
        cmocka_unit_test(test_pjf_saturation_and_linear),
        cmocka_unit_test(test_gm_is_two_sqrt_beta_id),
        cmocka_unit_test(test_gate_diode_current),
        cmocka_unit_test(test_reverse_vds_is_symmetric),
        cmocka_unit_test(test_ac_against_dc_differences),
        cmocka_unit_test(test_channel_thermal_noise),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
