/* Noise analysis: device noise sources against their published closed forms (thermal, shot,
 * flicker, the kT/C result, the hybrid-pi input noise), the adjoint sweep against one direct
 * solve per source, the summary and contribution tables, and the .noise error paths.
 * Expected numbers marked "noise_expected.py" are printed by tests/reference/noise_expected.py
 * (numpy/scipy, independent of the C code). */
#include "ss_test.h"

#include "analysis/analysis.h"
#include "netlist/circuit.h"

#define K_BOLTZMANN 1.380649e-23   /* J/K, exact (SI 2019) */
#define Q_ELECTRON 1.602176634e-19 /* C, exact (SI 2019) */
#define T_DEFAULT_K 300.15         /* 27 C */

typedef struct noise_run {
    ss_circuit *ckt;
    ss_table *noise, *summary, *contrib;
} noise_run;

static void run_noise(const char *text, noise_run *r)
{
    memset(r, 0, sizeof *r);
    r->ckt = ss_test_parse(text);
    ss_error err;
    memset(&err, 0, sizeof err);
    if (ss_noise_run(ss_test_sv(r->ckt), &r->noise, &r->summary, &r->contrib, &err) != SS_OK) {
        char msg[1400];
        ss_error_format(&err, msg, sizeof msg);
        print_error("noise failed: %s\n", msg);
        ss_test_destroy(&r->ckt);
        fail();
    }
}

static void noise_run_clear(noise_run *r)
{
    ss_table_destroy(&r->noise);
    ss_table_destroy(&r->summary);
    ss_table_destroy(&r->contrib);
    ss_test_destroy(&r->ckt);
}

static double metric(const noise_run *r, const char *name)
{
    return ss_table_lookup(r->summary, name, 0);
}

/* the contribution row of `label`; fails when absent */
static int contrib_row(const noise_run *r, const char *label)
{
    for (int i = 0; i < ss_table_rows(r->contrib); i++)
        if (strcmp(ss_table_row_label(r->contrib, i), label) == 0)
            return i;
    print_error("no contribution row '%s'\n", label);
    fail();
    return -1;
}

/* ---- closed forms -------------------------------------------------------------------------- */

/* A resistor's open-circuit thermal noise sqrt(4kTR) (Nyquist 1928; Johnson 1928): 1 kOhm at
 * 300.15 K -> 4.0713722372192895e-09 V/rtHz, at 273.15 K -> 3.8839375605176761e-09 V/rtHz
 * (noise_expected.py). Driven by an ideal current source (noiseless, open), the input-referred
 * density is the current density sqrt(4kT/R) = 4.0713722372192896e-12 A/rtHz. */
static void test_resistor_open_circuit_noise_is_sqrt_4ktr(void **state)
{
    (void)state;
    noise_run r;
    run_noise("resistor noise\ni1 0 out dc 0 ac 1\nr1 out 0 1k\n.ac dec 1 10 1k\n"
              ".noise v(out) i1\n",
              &r);
    assert_int_equal(ss_table_rows(r.noise), 3);
    assert_string_equal(ss_table_col_name(r.noise, 0), "freq_hz");
    assert_string_equal(ss_table_col_name(r.noise, 1), "out_noise_v_rthz");
    assert_string_equal(ss_table_col_name(r.noise, 2), "in_noise_v_rthz");
    for (int k = 0; k < 3; k++) {
        ss_assert_close(ss_table_get(r.noise, k, 1), 4.0713722372192895e-09, 1e-12, 0);
        ss_assert_close(ss_table_get(r.noise, k, 2), 4.0713722372192896e-12, 1e-12, 0);
    }
    /* the resistor across the current source is its Norton resistance: the only noise, so the
     * noise figure is 0 dB by definition (docs/noise.md) */
    ss_assert_close(metric(&r, "source_res_ohm"), 1000.0, 0, 0);
    ss_assert_close(metric(&r, "noise_figure_db"), 0.0, 0, 1e-12);
    ss_assert_close(metric(&r, "temp_k"), T_DEFAULT_K, 1e-15, 0);
    noise_run_clear(&r);

    run_noise("resistor noise cold\n.temp 0\ni1 0 out dc 0 ac 1\nr1 out 0 1k\n"
              ".ac lin 2 10 20\n.noise v(out) i1\n",
              &r);
    ss_assert_close(ss_table_get(r.noise, 0, 1), 3.8839375605176761e-09, 1e-12, 0);
    noise_run_clear(&r);
}

/* RC low-pass: the total output noise is sqrt(kT/C) whatever R (the kT/C result; Gray & Meyer
 * ch. 11 -- from memory). C = 1 nF: 2.0356861186096444e-06 V. Over .ac dec 100 1 1g the
 * trapezoid rule gives 2.0356688348153972e-06 V (R = 1k) and 2.0353678690528699e-06 V
 * (R = 100k), computed with numpy from 4kTR/(1 + (wRC)^2) on the same grid (noise_expected.py):
 * checked to 1e-9, and against kT/C to 1 %. */
static void test_rc_lowpass_total_noise_is_kt_over_c(void **state)
{
    (void)state;
    static const struct {
        const char *r_text;
        double r_ohm, trapezoid_v;
    } cases[] = {{"1k", 1e3, 2.0356688348153972e-06}, {"100k", 1e5, 2.0353678690528699e-06}};
    for (size_t i = 0; i < 2; i++) {
        char text[512];
        snprintf(text, sizeof text,
                 "rc noise\nvin in 0 ac 1\nr1 in out %s\nc1 out 0 1n\n.ac dec 100 1 1g\n"
                 ".noise v(out) vin\n",
                 cases[i].r_text);
        noise_run r;
        run_noise(text, &r);
        double rms = metric(&r, "out_noise_rms_v");
        ss_assert_close(rms, cases[i].trapezoid_v, 1e-9, 0);
        ss_assert_close(rms, 2.0356861186096444e-06, 1e-2, 0);
        ss_assert_close(metric(&r, "f_start_hz"), 1.0, 1e-12, 0);
        ss_assert_close(metric(&r, "f_stop_hz"), 1e9, 1e-12, 0);
        /* r1 is the source resistance (found in series with vin) and the only noise */
        ss_assert_close(metric(&r, "source_res_ohm"), cases[i].r_ohm, 0, 0);
        ss_assert_close(metric(&r, "noise_figure_db"), 0.0, 0, 1e-9);
        int row = contrib_row(&r, "r1 thermal");
        ss_assert_close(ss_table_get(r.contrib, row, 1), 100.0, 1e-12, 0);
        /* at 1 Hz the gain is 1 within 2e-7: input-referred = output = sqrt(4kTR) */
        ss_assert_close(ss_table_get(r.noise, 0, 2),
                        sqrt(4.0 * K_BOLTZMANN * T_DEFAULT_K * cases[i].r_ohm), 1e-6, 0);
        noise_run_clear(&r);
    }
}

/* Diode fed 1 mA by an ideal current source: shot noise 2q Id (Schottky 1918) plus flicker
 * KF Id^AF / f (the KF, AF parameter form, common practice) through the junction's own
 * small-signal resistance 1/(gd + gmin). KF 3.2e-17, AF 1 puts the flicker corner at
 * KF/(2q) = 99.9 Hz. Densities from noise_expected.py. */
static void test_diode_shot_and_flicker_noise(void **state)
{
    (void)state;
    noise_run r;
    run_noise("diode noise\n.model dn d is=1e-14 n=1 kf=3.2e-17 af=1\ni1 0 a dc 1m ac 1\n"
              "d1 a 0 dn\n.ac dec 1 1 1k\n.noise v(a) i1\n",
              &r);
    static const double expect[4] = {4.6499666447331777e-09, 1.5346502764606954e-09,
                                     6.5455911759891127e-10, 4.855690014518669e-10};
    assert_int_equal(ss_table_rows(r.noise), 4);
    for (int k = 0; k < 4; k++)
        ss_assert_close(ss_table_get(r.noise, k, 1), expect[k], 1e-6, 0);
    contrib_row(&r, "d1 shot");
    contrib_row(&r, "d1 flicker");
    assert_true(isnan(metric(&r, "noise_figure_db"))); /* no resistor: no reference */
    noise_run_clear(&r);
}

/* Collector shot noise 2q Ic (Schottky 1918) alone: the base is held by an ideal source (the
 * base shot noise flows into it) and the collector current is read through a 0 V source and
 * a 1-ohm transresistance. Vbe 0.7 V, IS 1e-15: Ic = 5.6702946835407474e-04 A, output
 * sqrt(2q Ic) = 1.3479475991197439e-11 V/rtHz, input-referred sqrt(2q Ic)/gm =
 * 6.1486336356301882e-10 V/rtHz, which is Gray & Meyer's sqrt(4kT/(2gm)) (ch. 11, from
 * memory) = 6.1486336356247671e-10 (noise_expected.py). */
static void test_bjt_collector_shot_noise(void **state)
{
    (void)state;
    noise_run r;
    run_noise("bjt shot\n.model qn npn is=1e-15 bf=100\nvb b 0 dc 0.7 ac 1\nvcc cc 0 5\n"
              "vm cc c 0\nq1 c b 0 qn\nh1 out 0 vm 1\n.ac dec 1 1k 10k\n.noise v(out) vb\n",
              &r);
    for (int k = 0; k < 2; k++) {
        ss_assert_close(ss_table_get(r.noise, k, 1), 1.3479475991197439e-11, 1e-9, 0);
        ss_assert_close(ss_table_get(r.noise, k, 2), 6.1486336356301882e-10, 1e-9, 0);
        ss_assert_close(ss_table_get(r.noise, k, 2), 6.1486336356247671e-10, 1e-9, 0);
    }
    int row = contrib_row(&r, "q1 collector shot");
    assert_int_equal(row, 0);
    ss_assert_close(ss_table_get(r.contrib, row, 1), 100.0, 1e-9, 0);
    row = contrib_row(&r, "q1 base shot");
    ss_assert_close(ss_table_get(r.contrib, row, 1), 0.0, 0, 1e-9);
    noise_run_clear(&r);
}

/* Common-emitter input noise against the hybrid-pi noise model (collector shot, base shot, rb
 * and rs thermal; Gray & Meyer ch. 11 -- from memory). With Rt = rs + rb and gpi, gm the
 * small-signal parameters at the operating point:
 *   S_in = 4kT Rt + 2q Ib Rt^2 + 2q Ic (1 + Rt gpi)^2 / gm^2
 * (derived in docs/noise.md). rs 1k, RB 100, vin dc 0.72: in 4.6917526845896141e-09 V/rtHz,
 * noise figure 1.2318860064121737 dB (noise_expected.py, cross-checked there by nodal
 * analysis). Also checked against the same formula on the solver's own operating point. */
static void test_ce_input_noise_matches_hybrid_pi(void **state)
{
    (void)state;
    noise_run r;
    run_noise("ce noise\n.model qn npn is=1e-15 bf=100 rb=100\nvin in 0 dc 0.72 ac 1\n"
              "rs in b 1k\nq1 c b 0 qn\nvcc cc 0 5\nvm cc c 0\nh1 out 0 vm 1\n"
              ".ac dec 1 1k 10k\n.noise v(out) vin\n",
              &r);
    double in_d = ss_table_get(r.noise, 0, 2);
    ss_assert_close(in_d, 4.6917526845896141e-09, 1e-5, 0);
    ss_assert_close(metric(&r, "noise_figure_db"), 1.2318860064121737, 0, 1e-4);
    ss_assert_close(metric(&r, "source_res_ohm"), 1000.0, 0, 0);
    /* the same closed form on the solver's own operating point */
    ss_table *op = NULL;
    ss_error err = {0};
    assert_int_equal(ss_op_solve(ss_test_sv(r.ckt), &op, NULL, &err), SS_OK);
    double ic = ss_test_opval(op, "ic(q1)"), ib = ss_test_opval(op, "ib(q1)");
    double gm = ss_test_opval(op, "gm(q1)");
    double rt = 1100.0, gpi = gm / 100.0, kt4 = 4.0 * K_BOLTZMANN * T_DEFAULT_K;
    double s_in = kt4 * rt + 2.0 * Q_ELECTRON * ib * rt * rt +
                  2.0 * Q_ELECTRON * ic * (1.0 + rt * gpi) * (1.0 + rt * gpi) / (gm * gm);
    ss_assert_close(in_d, sqrt(s_in), 2e-6, 0);
    ss_assert_close(metric(&r, "noise_figure_db"), 10.0 * log10(s_in / (kt4 * 1000.0)), 0, 1e-5);
    /* white noise only: the band rms is the density times sqrt(bandwidth) */
    ss_assert_close(metric(&r, "in_noise_rms_v"), in_d * sqrt(9000.0), 1e-9, 0);
    ss_table_destroy(&op);
    noise_run_clear(&r);
}

/* Driven straight into the base (no source resistor), a transistor with a small rb has Gray &
 * Meyer's input noise voltage e_n^2 = 4kT (rb + 1/(2 gm)) (ch. 11, from memory), which
 * neglects the base shot noise across rb and rb/rpi: 5.8400793389059305e-10 V/rtHz here, the
 * exact hybrid-pi form 5.857632914727066e-10 (noise_expected.py; 0.3 % apart). With no source
 * resistor the noise figure is empty. */
static void test_ce_input_noise_near_gray_meyer_en(void **state)
{
    (void)state;
    noise_run r;
    run_noise("en\n.model qn npn is=1e-15 bf=100 rb=10\nvin b 0 dc 0.72 ac 1\nq1 c b 0 qn\n"
              "vcc cc 0 5\nvm cc c 0\nh1 out 0 vm 1\n.ac dec 1 1k 10k\n.noise v(out) vin\n",
              &r);
    double in_d = ss_table_get(r.noise, 1, 2);
    ss_assert_close(in_d, 5.857632914727066e-10, 1e-5, 0);
    ss_assert_close(in_d, 5.8400793389059305e-10, 1e-2, 0);
    assert_true(isnan(metric(&r, "noise_figure_db")));
    assert_true(isnan(metric(&r, "source_res_ohm")));
    noise_run_clear(&r);
}

/* ---- the adjoint sweep against the direct method ----------------------------------------- */

static const char *STAGE = "adjoint vs direct\n"
                           ".model qn npn is=2e-15 bf=150 vaf=80 rb=120 re=2 rc=15 cje=6p "
                           "cjc=2p tf=0.3n kf=1e-15 af=1.2\n"
                           ".model dn d is=5e-15 rs=8 cjo=2p kf=1e-16\n"
                           "vcc vcc 0 9\nvin in 0 dc 0 ac 1\nrs in b1 600\nc1 b1 b 4.7u\n"
                           "r1 vcc b 68k\nr2 b 0 12k\nrc vcc c 3.3k\nre e 0 560\nce e 0 47u\n"
                           "q1 c b e qn\nc2 c out 1u\nrl out 0 22k\n"
                           "d1 vcc dd dn\nrd dd 0 47k\ncd dd c 100n\n"
                           ".ac dec 10 10 10meg\n.noise v(out) vin\n";

/* The adjoint network gives every source's transfer impedance from one transposed solve; the
 * direct method solves A x = b once per noise source (1 A between its nodes) and sums the
 * squares (superposition of uncorrelated sources; standard circuit theory). Both run on the
 * same factorization, so they agree to rounding. */
static void test_adjoint_equals_direct_per_source(void **state)
{
    (void)state;
    noise_run r;
    run_noise(STAGE, &r);
    ss_circuit *ckt = r.ckt;
    noise_src *src = NULL;
    int ns = 0;
    ss_error err = {0};
    assert_int_equal(noise_collect_sources(ss_test_sv(ckt), &src, &ns, &err), SS_OK);
    assert_true(ns >= 12); /* 7 resistors + q1 (6) + d1 (3) */
    const element *vin = &ss_test_sv(ckt)->elem[circuit_find_elem(ckt, "vin")];
    int out = circuit_find_node(ckt, "out");
    int n = ss_test_sv(ckt)->n_unknowns;
    double complex *b = ss_alloc((size_t)n * sizeof *b);
    assert_non_null(b);
    for (int k = 0; k < ss_table_rows(r.noise); k++) {
        double f = ss_table_get(r.noise, k, 0);
        assert_int_equal(ac_solve_point(ss_test_sv(ckt), 2.0 * SS_PI * f, vin, 0, 0, &err), SS_OK);
        double complex gain = ss_test_sv(ckt)->work_zrhs[out - 1];
        double s = 0.0;
        for (int i = 0; i < ns; i++) {
            const dev_noise_src *d = &src[i].src;
            memset(b, 0, (size_t)n * sizeof *b);
            if (d->node_a > 0)
                b[d->node_a - 1] += 1.0;
            if (d->node_b > 0)
                b[d->node_b - 1] -= 1.0;
            assert_int_equal(mna_solve_complex_again(ss_test_sv(ckt)->mna, b), SS_OK);
            double z = cabs(b[out - 1]);
            s += z * z * (d->white_a2_per_hz + d->flicker_a2 / f);
        }
        ss_assert_close(ss_table_get(r.noise, k, 1), sqrt(s), 1e-9, 0);
        ss_assert_close(ss_table_get(r.noise, k, 2), sqrt(s) / cabs(gain), 1e-9, 0);
    }
    ss_free(b);
    ss_free(src);
    noise_run_clear(&r);
}

/* Shares are of the band-integrated output noise power: they add up to 100 %, the squares of
 * the per-source rms values add up to the total's, and the table is ranked by element total,
 * each element's rows together. */
static void test_contributions_ranked_and_add_up(void **state)
{
    (void)state;
    noise_run r;
    run_noise(STAGE, &r);
    assert_string_equal(ss_table_col_name(r.contrib, 0), "out_noise_rms_v");
    assert_string_equal(ss_table_col_name(r.contrib, 1), "share_pct");
    assert_string_equal(ss_table_col_name(r.contrib, 2), "element_share_pct");
    double share = 0.0, pow_sum = 0.0;
    int rows = ss_table_rows(r.contrib);
    for (int i = 0; i < rows; i++) {
        double v = ss_table_get(r.contrib, i, 0);
        share += ss_table_get(r.contrib, i, 1);
        pow_sum += v * v;
        if (i > 0)
            assert_true(ss_table_get(r.contrib, i, 2) <= ss_table_get(r.contrib, i - 1, 2));
    }
    ss_assert_close(share, 100.0, 1e-9, 0);
    double total = metric(&r, "out_noise_rms_v");
    ss_assert_close(sqrt(pow_sum), total, 1e-9, 0);
    /* each element's rows are adjacent and their shares add up to its element share */
    for (int i = 0; i < rows;) {
        const char *lab = ss_table_row_label(r.contrib, i);
        size_t len = strcspn(lab, " ");
        double es = ss_table_get(r.contrib, i, 2), sum = 0.0;
        int j = i;
        while (j < rows && strncmp(ss_table_row_label(r.contrib, j), lab, len) == 0 &&
               ss_table_row_label(r.contrib, j)[len] == ' ')
            sum += ss_table_get(r.contrib, j++, 1);
        ss_assert_close(sum, es, 1e-9, 1e-12);
        for (int k = j; k < rows; k++)
            assert_false(strncmp(ss_table_row_label(r.contrib, k), lab, len) == 0 &&
                         ss_table_row_label(r.contrib, k)[len] == ' ');
        i = j;
    }
    contrib_row(&r, "q1 rb thermal");
    contrib_row(&r, "q1 re thermal");
    contrib_row(&r, "q1 rc thermal");
    contrib_row(&r, "q1 flicker");
    contrib_row(&r, "d1 rs thermal");
    /* rs (in series with vin) is the noise figure's reference */
    ss_assert_close(metric(&r, "source_res_ohm"), 600.0, 0, 0);
    int row = contrib_row(&r, "rs thermal");
    double nf = -10.0 * log10(ss_table_get(r.contrib, row, 1) / 100.0);
    ss_assert_close(metric(&r, "noise_figure_db"), nf, 1e-9, 0);
    assert_true(metric(&r, "noise_figure_db") > 0.0);
    noise_run_clear(&r);
}

/* rs= names the reference resistor explicitly; ss_solver_set_noise does the same through the
 * API (names case-insensitive) and overrides the netlist's line. */
static void test_rs_names_the_noise_figure_reference(void **state)
{
    (void)state;
    noise_run auto_r, named;
    run_noise(STAGE, &auto_r);
    char text[2048];
    /* the same stage with rs= on its .noise line (a second .noise line is an error) */
    snprintf(text, sizeof text, "%.*s rs=r2\n", (int)strlen(STAGE) - 1, STAGE);
    run_noise(text, &named);
    ss_assert_close(metric(&named, "source_res_ohm"), 12e3, 0, 0);
    ss_assert_close(metric(&named, "out_noise_rms_v"), metric(&auto_r, "out_noise_rms_v"), 1e-12,
                    0);
    int row = contrib_row(&named, "r2 thermal");
    ss_assert_close(metric(&named, "noise_figure_db"),
                    -10.0 * log10(ss_table_get(named.contrib, row, 1) / 100.0), 1e-9, 0);

    ss_error err = {0};
    assert_int_equal(ss_solver_set_noise(ss_test_sv(named.ckt), "OUT", "Vin", "RS", &err), SS_OK);
    ss_table *s = NULL;
    assert_int_equal(ss_noise_run(ss_test_sv(named.ckt), NULL, &s, NULL, &err), SS_OK);
    ss_assert_close(ss_table_lookup(s, "noise_figure_db", 0), metric(&auto_r, "noise_figure_db"),
                    1e-12, 0);
    ss_table_destroy(&s);
    /* another output: v(c) */
    assert_int_equal(ss_solver_set_noise(ss_test_sv(named.ckt), "c", "vin", NULL, &err), SS_OK);
    assert_int_equal(ss_noise_run(ss_test_sv(named.ckt), NULL, &s, NULL, &err), SS_OK);
    assert_true(ss_table_lookup(s, "out_noise_rms_v", 0) > 0.0);
    ss_table_destroy(&s);
    noise_run_clear(&auto_r);
    noise_run_clear(&named);
}

/* ---- allocation ---------------------------------------------------------------------------- */

static long noise_allocations(const char *text)
{
    ss_circuit *ckt = ss_test_parse(text);
    ss_error err = {0};
    assert_int_equal(ss_op_solve(ss_test_sv(ckt), NULL, NULL, &err), SS_OK);
    long before = ss_alloc_count();
    ss_table *t = NULL, *s = NULL, *c = NULL;
    assert_int_equal(ss_noise_run(ss_test_sv(ckt), &t, &s, &c, &err), SS_OK);
    long used = ss_alloc_count() - before;
    ss_table_destroy(&t);
    ss_table_destroy(&s);
    ss_table_destroy(&c);
    ss_test_destroy(&ckt);
    return used;
}

/* Setup allocates, the frequency loop does not: 3 points or 601 cost the same allocations. */
static void test_sweep_allocates_nothing_per_frequency(void **state)
{
    (void)state;
    const char *base = "alloc\n.model qn npn is=1e-15 bf=100 rb=50 cje=5p cjc=2p\n"
                       "vin in 0 dc 0.72 ac 1\nrs in b 1k\nq1 c b 0 qn\nrc vcc c 4.7k\n"
                       "vcc vcc 0 9\n.noise v(c) vin\n";
    char few[1024], many[1024];
    snprintf(few, sizeof few, "%s.ac dec 1 10 100\n", base);
    snprintf(many, sizeof many, "%s.ac dec 100 10 10meg\n", base);
    assert_int_equal(noise_allocations(few), noise_allocations(many));
}

/* The adjoint costs one extra triangular solve per frequency, not one per noise source: N
 * frequencies take N refactor-and-solves and N solves on the existing factorization. */
static void test_one_extra_solve_per_frequency(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(STAGE);
    ss_error err = {0};
    assert_int_equal(ss_op_solve(ss_test_sv(ckt), NULL, NULL, &err), SS_OK);
    mna_counters before = *mna_get_counters(ss_test_sv(ckt)->mna);
    ss_table *t = NULL;
    assert_int_equal(ss_noise_run(ss_test_sv(ckt), &t, NULL, NULL, &err), SS_OK);
    const mna_counters *after = mna_get_counters(ss_test_sv(ckt)->mna);
    long nf = ss_table_rows(t);
    assert_int_equal(nf, 61);
    assert_int_equal(after->complex_solves - before.complex_solves, nf);
    assert_int_equal(after->complex_extra_solves - before.complex_extra_solves, nf);
    ss_table_destroy(&t);
    ss_test_destroy(&ckt);
}

static ss_status alloc_run_once(const char *text)
{
    ss_circuit *ckt = NULL;
    ss_solver *sv = NULL;
    ss_table *t = NULL, *s = NULL, *c = NULL;
    ss_error err = {0};
    ss_status st = ss_circuit_parse_text(text, strlen(text), "a.cir", NULL, 0, &ckt, &err);
    if (st == SS_OK)
        st = ss_solver_create(ckt, &sv, &err);
    if (st == SS_OK)
        st = ss_noise_run(sv, &t, &s, &c, &err);
    if (st != SS_OK) {
        assert_true(err.code != SS_OK);
        assert_true(err.message[0] != '\0');
        assert_null(t);
    }
    ss_table_destroy(&t);
    ss_table_destroy(&s);
    ss_table_destroy(&c);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    return st;
}

/* parse -> noise with allocation N failing, N = 0, 1, 2, ... : every run ends in a clean error
 * (the sanitizer build checks for leaks). */
static void test_every_allocation_failure_is_clean(void **state)
{
    (void)state;
    /* the .ac path, and a band of its own with the A-weighting (its grid and weights) */
    char banded[2048];
    snprintf(banded, sizeof banded, "%.*s band=10..10k per_decade=4 weight=a\n",
             (int)strlen(STAGE) - 1, STAGE);
    const char *texts[2] = {STAGE, banded};
    for (int t = 0; t < 2; t++) {
        long n;
        int nomem_seen = 0;
        for (n = 0; n < 100000; n++) {
            ss_alloc_fail_at(n);
            ss_status st = alloc_run_once(texts[t]);
            if (st == SS_OK)
                break;
            nomem_seen += st == SS_ERR_NOMEM;
        }
        ss_alloc_fail_at(-1);
        assert_true(n > 10);
        assert_true(nomem_seen > 0);
    }
}

/* ---- errors -------------------------------------------------------------------------------- */

static void expect_parse_error(const char *noise_line, const char *message)
{
    char text[1024], buf[1400];
    snprintf(text, sizeof text, "t\nvin in 0 ac 1\nr1 in out 1k\nc1 out 0 1n\n.ac dec 1 1 10\n%s\n",
             noise_line);
    assert_int_equal(ss_test_parse_error(text, buf, sizeof buf), SS_ERR_INPUT);
    ss_assert_contains(buf, message);
}

static void test_noise_line_errors_name_line_and_fault(void **state)
{
    (void)state;
    expect_parse_error(".noise", "test.cir:6: .noise expects v(OUT) SRC [rs=RESISTOR]");
    expect_parse_error(".noise v(out)", "test.cir:6: .noise expects v(OUT) SRC");
    expect_parse_error(".noise out vin",
                       "test.cir:6: .noise: the output must be written v(NODE), got 'out'");
    expect_parse_error(".noise v(out,in) vin", "test.cir:6: .noise: a differential output");
    expect_parse_error(".noise v( ) vin", "test.cir:6: .noise: v() names no output node");
    expect_parse_error(".noise v(nowhere) vin",
                       "test.cir:6: .noise: output node 'nowhere' does not exist");
    expect_parse_error(".noise v(0) vin", "test.cir:6: .noise: output node '0' is ground");
    expect_parse_error(".noise v(out) r1",
                       "test.cir:6: .noise: 'r1' is not an independent voltage or current "
                       "source");
    expect_parse_error(".noise v(out) vx",
                       "test.cir:6: .noise: 'vx' is not an independent voltage or current "
                       "source");
    expect_parse_error(".noise v(out) vin rs=c1",
                       "test.cir:6: .noise: rs=c1 is not a resistor of the circuit");
    expect_parse_error(".noise v(out) vin gain=2",
                       "test.cir:6: .noise: unknown field 'gain' (known: rs, band, "
                       "per_decade, weight)");
    expect_parse_error(".noise v(out) vin band=1k",
                       "test.cir:6: .noise: band= needs F1..F2 (two frequencies in Hz), got '1k'");
    expect_parse_error(".noise v(out) vin band=1k..1",
                       "test.cir:6: .noise: band=1k..1 needs 0 < F1 < F2");
    expect_parse_error(".noise v(out) vin band=0..1",
                       "test.cir:6: .noise: band=0..1 needs 0 < F1 < F2");
    expect_parse_error(".noise v(out) vin band=1..x",
                       "test.cir:6: .noise: band= needs F1..F2 (two frequencies in Hz), got "
                       "'1..x'");
    expect_parse_error(".noise v(out) vin band=1..1 band=1..2", "test.cir:6: .noise: band=1..1");
    expect_parse_error(".noise v(out) vin band=1..2 band=1..3",
                       "test.cir:6: .noise: 'band' given twice");
    expect_parse_error(".noise v(out) vin per_decade=1",
                       "test.cir:6: .noise: per_decade needs a whole number from 2 to 10000, got "
                       "'1'");
    expect_parse_error(".noise v(out) vin per_decade=10.5",
                       "test.cir:6: .noise: per_decade needs a whole number");
    expect_parse_error(".noise v(out) vin weight=c",
                       "test.cir:6: .noise: weight needs 'a' (A-weighting), got 'c'");
}

static void test_noise_line_sets_flag_and_accepts_spaces(void **state)
{
    (void)state;
    noise_run r;
    run_noise("t\nvin in 0 ac 1\nr1 in out 1k\nc1 out 0 1n\n.ac dec 1 1 10\n"
              ".NOISE V( OUT ) VIN RS=R1\n",
              &r);
    ss_analysis_flags fl;
    ss_circuit_analyses(r.ckt, &fl);
    assert_int_equal(fl.noise, 1);
    ss_assert_close(metric(&r, "source_res_ohm"), 1000.0, 0, 0);
    noise_run_clear(&r);
}

static void test_run_errors(void **state)
{
    (void)state;
    ss_error err = {0};
    char buf[1400];
    /* no noise analysis named */
    ss_circuit *ckt = ss_test_parse("t\nvin in 0 ac 1\nr1 in out 1k\n.ac dec 1 1 10\n");
    ss_table *t = NULL;
    assert_int_equal(ss_noise_run(ss_test_sv(ckt), &t, NULL, NULL, &err), SS_ERR_INPUT);
    assert_null(t);
    ss_error_format(&err, buf, sizeof buf);
    ss_assert_contains(buf, "no noise analysis named");
    /* ss_solver_set_noise names what does not exist */
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_noise(ss_test_sv(ckt), "nowhere", "vin", NULL, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "noise output node 'nowhere' does not exist");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_noise(ss_test_sv(ckt), "0", "vin", NULL, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "is ground");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_noise(ss_test_sv(ckt), "out", "r1", NULL, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "noise input 'r1' is not an independent source");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_noise(ss_test_sv(ckt), "out", "vin", "vin", &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "'vin' is not a resistor");
    ss_test_destroy(&ckt);
    /* .noise without .ac: located at the .noise line */
    ckt = ss_test_parse("t\nvin in 0 ac 1\nr1 in out 1k\n.noise v(out) vin\n");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_noise_run(ss_test_sv(ckt), &t, NULL, NULL, &err), SS_ERR_INPUT);
    ss_error_format(&err, buf, sizeof buf);
    ss_assert_contains(buf, "test.cir:4: .noise: the netlist has no .ac sweep");
    ss_test_destroy(&ckt);
}

/* ---- a band of its own, the A-weighting ----------------------------------------------------- */

/* IEC 61672-1:2013, Table 3 (from memory): the A-weighting in dB at the nominal one-third
 * octave frequencies 10 Hz .. 20 kHz, tabulated at the exact base-10 frequencies
 * 1 kHz * 10^(n/10), n = -20 .. 13, rounded to 0.1 dB. The weighting of noise.c rounded the
 * same way must give every value. */
static void test_a_weighting_matches_the_standard_table(void **state)
{
    (void)state;
    static const double table_db[34] = {
        -70.4, -63.4, -56.7, -50.5, -44.7, -39.4, -34.6, -30.2, -26.2, -22.5, -19.1, -16.1,
        -13.4, -10.9, -8.6,  -6.6,  -4.8,  -3.2,  -1.9,  -0.8,  0.0,   0.6,   1.0,   1.2,
        1.3,   1.2,   1.0,   0.5,   -0.1,  -1.1,  -2.5,  -4.3,  -6.6,  -9.3};
    for (int n = -20; n <= 13; n++) {
        double f = 1000.0 * pow(10.0, n / 10.0);
        double db = 20.0 * log10(noise_a_weight(f));
        double rounded = round(db * 10.0) / 10.0;
        if (fabs(rounded - table_db[n + 20]) > 1e-9) {
            print_error("A(%.6g Hz) = %.4f dB, table %.1f dB\n", f, db, table_db[n + 20]);
            fail();
        }
    }
    /* 0 dB at 1 kHz by the standard's normalisation constant, to its three decimals */
    assert_true(fabs(20.0 * log10(noise_a_weight(1000.0))) < 0.0005);
}

/* An RC low-pass driven by vin through R, with its own band: the output density is
 * 4kTR/(1 + (f/fc)^2) (Johnson 1928; Nyquist 1928), so the band integral is
 * 4kTR fc (atan(f2/fc) - atan(f1/fc)), and the input-referred density the flat 4kTR, so its
 * integral is 4kTR (f2 - f1). Simpson's rule in ln f at 100 points a decade holds both to
 * 1e-8 (docs/noise.md measures it); the grid is 3 decades * 100 + 1 points, from exactly f1 to
 * exactly f2, whatever the .ac line says. */
static void test_band_integral_matches_closed_form(void **state)
{
    (void)state;
    noise_run r;
    run_noise("rc\nvin in 0 ac 1\nr1 in out 10k\nc1 out 0 10n\n.ac dec 5 1meg 10meg\n"
              ".noise v(out) vin band=10..10k\n",
              &r);
    double kt4r = 4.0 * K_BOLTZMANN * T_DEFAULT_K * 1e4;
    double fc = 1.0 / (2.0 * SS_PI * 1e4 * 1e-8);
    double out2 = kt4r * fc * (atan(1e4 / fc) - atan(10.0 / fc));
    ss_assert_close(metric(&r, "out_noise_band_rms_v"), sqrt(out2), 1e-8, 0.0);
    ss_assert_close(metric(&r, "out_noise_rms_v"), sqrt(out2), 1e-8, 0.0);
    ss_assert_close(metric(&r, "in_noise_band_rms_v"), sqrt(kt4r * (1e4 - 10.0)), 1e-8, 0.0);
    assert_int_equal(ss_table_rows(r.noise), 301);
    assert_true(metric(&r, "band_points") == 301.0);
    assert_true(ss_table_get(r.noise, 0, 0) == 10.0);
    assert_true(ss_table_get(r.noise, 300, 0) == 1e4);
    assert_true(metric(&r, "f_start_hz") == 10.0 && metric(&r, "f_stop_hz") == 1e4);
    assert_true(isnan(metric(&r, "out_noise_a_rms_v"))); /* no row without weight= */
    noise_run_clear(&r);
}

/* A band needs no .ac line; per_decade sets the density (rounded up to an even number of
 * intervals); the API's band and weighting override the line's, and (0, 0) removes the band. */
static void test_band_without_ac_and_api_overrides(void **state)
{
    (void)state;
    noise_run r;
    run_noise("r\niin 0 out ac 1\nr1 out 0 1k\n.noise v(out) iin band=1..1k per_decade=5\n", &r);
    assert_int_equal(ss_table_rows(r.noise), 17); /* 15 intervals -> 16 */
    double kt4r = 4.0 * K_BOLTZMANN * T_DEFAULT_K * 1e3;
    /* at 5 points a decade Simpson's rule on the white S(f) f = S e^u is off by h^4/180 in
     * power, h = ln(10) 3/16: 9.4e-5 in the rms */
    ss_assert_close(metric(&r, "out_noise_band_rms_v"), sqrt(kt4r * 999.0), 1.2e-4, 0.0);
    ss_solver *sv = ss_test_sv(r.ckt);
    ss_error err = {0};
    assert_int_equal(ss_solver_set_noise_band(sv, 2.0, 1.0, 0, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "noise band 2 .. 1 Hz: needs 0 < F1 < F2");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_noise_band(sv, 1.0, 10.0, 1, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "1 points a decade is outside 2 .. 10000");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_noise_weight(sv, "c", &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "noise weighting 'c'");
    assert_int_equal(ss_solver_set_noise_band(sv, 10.0, 100.0, 10, &err), SS_OK);
    assert_int_equal(ss_solver_set_noise_weight(sv, "a", &err), SS_OK);
    ss_table *t = NULL, *sum = NULL;
    assert_int_equal(ss_noise_run(sv, &t, &sum, NULL, &err), SS_OK);
    assert_int_equal(ss_table_rows(t), 11);
    /* 10 points a decade: h^4/360 = 7.8e-6 in the rms */
    ss_assert_close(ss_table_lookup(sum, "out_noise_band_rms_v", 0), sqrt(kt4r * 90.0), 1e-5, 0.0);
    assert_true(ss_table_lookup(sum, "out_noise_a_rms_v", 0) <
                ss_table_lookup(sum, "out_noise_band_rms_v", 0));
    ss_table_destroy(&t);
    ss_table_destroy(&sum);
    /* no band and no .ac: the noise cannot run, located at the .noise line */
    assert_int_equal(ss_solver_set_noise_band(sv, 0.0, 0.0, 0, &err), SS_OK);
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_noise_run(sv, &t, NULL, NULL, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "no .ac sweep and the noise no band of its own");
    noise_run_clear(&r);
}

/* ss_limits_check_names predicts the band and weighted figures from the requests alone: they
 * exist exactly when the band or the weighting is asked for, and the message says what is
 * missing. */
static void test_limit_names_follow_band_and_weight(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("rc\nvin in 0 ac 1\nr1 in out 10k\nc1 out 0 10n\n"
                                    ".ac dec 5 1 1meg\n.noise v(out) vin\n");
    ss_solver *sv = ss_test_sv(ckt);
    ss_limits *lim = NULL;
    ss_error err = {0};
    assert_int_equal(ss_limits_create(&lim, &err), SS_OK);
    assert_int_equal(ss_limits_add_text(lim, "in_noise_band_rms_v <= 1u\nout_noise_a_rms_v <= 1u\n",
                                        "l.limits", &err),
                     SS_OK);
    char buf[1400];
    assert_int_equal(ss_limits_check_names(lim, sv, &err), SS_ERR_INPUT);
    ss_error_format(&err, buf, sizeof buf);
    ss_assert_contains(buf, "l.limits:1: limit on 'in_noise_band_rms_v': no such figure (a band "
                            "noise figure needs .noise with a band of its own");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_noise_band(sv, 1.0, 1e3, 0, &err), SS_OK);
    assert_int_equal(ss_limits_check_names(lim, sv, &err), SS_ERR_INPUT);
    ss_error_format(&err, buf, sizeof buf);
    ss_assert_contains(buf, "l.limits:2: limit on 'out_noise_a_rms_v': no such figure (an "
                            "A-weighted noise figure needs .noise with weight=a");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_noise_weight(sv, "a", &err), SS_OK);
    assert_int_equal(ss_limits_check_names(lim, sv, &err), SS_OK);
    ss_table *figs = NULL;
    assert_int_equal(ss_figures_compute(sv, lim, &figs, &err), SS_OK);
    assert_true(ss_table_lookup(figs, "in_noise_band_rms_v", 0) > 0.0);
    assert_true(ss_table_lookup(figs, "out_noise_a_rms_v", 0) > 0.0);
    ss_table_destroy(&figs);
    ss_limits_destroy(&lim);
    ss_test_destroy(&ckt);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_resistor_open_circuit_noise_is_sqrt_4ktr),
        cmocka_unit_test(test_rc_lowpass_total_noise_is_kt_over_c),
        cmocka_unit_test(test_diode_shot_and_flicker_noise),
        cmocka_unit_test(test_bjt_collector_shot_noise),
        cmocka_unit_test(test_ce_input_noise_matches_hybrid_pi),
        cmocka_unit_test(test_ce_input_noise_near_gray_meyer_en),
        cmocka_unit_test(test_adjoint_equals_direct_per_source),
        cmocka_unit_test(test_contributions_ranked_and_add_up),
        cmocka_unit_test(test_rs_names_the_noise_figure_reference),
        cmocka_unit_test(test_sweep_allocates_nothing_per_frequency),
        cmocka_unit_test(test_one_extra_solve_per_frequency),
        cmocka_unit_test(test_every_allocation_failure_is_clean),
        cmocka_unit_test(test_noise_line_errors_name_line_and_fault),
        cmocka_unit_test(test_noise_line_sets_flag_and_accepts_spaces),
        cmocka_unit_test(test_run_errors),
        cmocka_unit_test(test_a_weighting_matches_the_standard_table),
        cmocka_unit_test(test_band_integral_matches_closed_form),
        cmocka_unit_test(test_band_without_ac_and_api_overrides),
        cmocka_unit_test(test_limit_names_follow_band_and_weight),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
