/* Transient analysis and the stage's large-signal figures against closed forms: source forms,
 * RC step response, LC period and energy, charge conservation, harmonic ratios of an
 * exponential, a hard clipper's Fourier series, clipping onsets against the operating-point
 * solver's DC transfer, and the error paths. */
#define _DEFAULT_SOURCE /* mkstemp, P_tmpdir */
#include <stdlib.h>
#include <unistd.h>

#include "ss_test.h"

#include <complex.h>

#include "analysis/tran.h"
#include "devices/wave.h"
#include "netlist/circuit.h"

SS_HIDDEN void thd_harmonics(const double *x, int n, int n_harm, double *amp, double *phase_deg);
SS_HIDDEN double thd_ratio(const double *amp, int n_harm);

/* thermal voltage kT/q at 27 C = 300.15 K, computed in double precision from the exact
 * 2019-SI k = 1.380649e-23 J/K and q = 1.602176634e-19 C (CODATA 2018), rounded to 12
 * decimals; docs/models.md states the same value */
#define VT_300K15 0.025864925786

static ss_table *run_tran(const char *text, ss_circuit **out_ckt)
{
    ss_circuit *ckt = ss_test_parse(text);
    ss_table *t = NULL;
    ss_error err = {0};
    if (ss_tran_run(ss_test_sv(ckt), &t, &err) != SS_OK) {
        char msg[1400];
        ss_error_format(&err, msg, sizeof msg);
        print_error("tran failed: %s\n", msg);
        ss_test_destroy(&ckt);
        fail();
    }
    *out_ckt = ckt;
    return t;
}

static int col_of(const ss_table *t, const char *name)
{
    for (int c = 0; c < ss_table_cols(t); c++)
        if (strcmp(ss_table_col_name(t, c), name) == 0)
            return c;
    print_error("no column '%s'\n", name);
    fail();
    return -1;
}

static const src_wave *wave_of(const ss_circuit *ckt, const char *name)
{
    int i = circuit_find_elem(ckt, name);
    assert_true(i >= 0);
    assert_non_null(ss_test_sv(ckt)->elem[i].wave);
    return ss_test_sv(ckt)->elem[i].wave;
}

/* ---- source forms ------------------------------------------------------------------------ */

/* SIN(VO VA FREQ TD THETA PHASE): VO + VA exp(-THETA (t - TD)) sin(2 pi FREQ (t - TD) + PHASE)
 * after TD, VO + VA sin(PHASE) before (docs/transient.md); values by hand. */
static void test_sin_form_values(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("t\nv1 a 0 sin(1 2 1k 1m 100 30)\nr1 a 0 1k\n");
    const src_wave *w = wave_of(ckt, "v1");
    ss_assert_close(wave_value(w, 0.0, 0.0), 1.0 + 2.0 * 0.5, 1e-15, 0);
    ss_assert_close(ss_test_sv(ckt)->elem[0].value, 2.0, 1e-15, 0); /* no DC given: its t = 0 value */
    double t = 1.25e-3; /* a quarter period after TD: phase 90 + 30 degrees */
    ss_assert_close(wave_value(w, t, 0.0), 1.0 + 2.0 * exp(-100.0 * 0.25e-3) * sin(SS_PI * 2 / 3),
                    1e-13, 0);
    ss_assert_close(wave_next_break(w, 0.0, 0.0), 1e-3, 1e-15, 0);
    assert_true(isinf(wave_next_break(w, 1e-3, 0.0)));
    ss_test_destroy(&ckt);
    /* a DC value given as well wins at DC; the one-token and two-token spellings agree */
    ckt = ss_test_parse("t\nv1 a 0 dc 5 sin (0, 1, 1k) ac 1\nr1 a 0 1k\n");
    ss_assert_close(ss_test_sv(ckt)->elem[0].value, 5.0, 0, 0);
    ss_assert_close(ss_test_sv(ckt)->elem[0].ac_mag, 1.0, 0, 0);
    ss_assert_close(wave_value(wave_of(ckt, "v1"), 0.25e-3, 0.0), 1.0, 1e-15, 0);
    ss_test_destroy(&ckt);
}

/* PULSE(V1 V2 TD TR TF PW PER): linear edges, periodic; corners as breakpoints. */
static void test_pulse_form_values_and_corners(void **state)
{
    (void)state;
    ss_circuit *ckt =
        ss_test_parse("t\n.param hi=3\ni1 0 a pulse(-1 {hi} 1u 1u 2u 3u 10u)\nr1 a 0 1k\n");
    const src_wave *w = wave_of(ckt, "i1");
    ss_assert_close(ss_test_sv(ckt)->elem[0].value, -1.0, 0, 0);
    ss_assert_close(wave_value(w, 0.5e-6, 0.0), -1.0, 0, 0);
    ss_assert_close(wave_value(w, 1.5e-6, 0.0), 1.0, 1e-12, 0); /* mid-rise */
    ss_assert_close(wave_value(w, 4.0e-6, 0.0), 3.0, 0, 0);     /* top */
    ss_assert_close(wave_value(w, 6.0e-6, 0.0), 1.0, 1e-12, 0); /* mid-fall (5u .. 7u) */
    ss_assert_close(wave_value(w, 8.0e-6, 0.0), -1.0, 0, 0);
    ss_assert_close(wave_value(w, 11.5e-6, 0.0), 1.0, 1e-9, 0); /* next period */
    const double corners[] = {1e-6, 2e-6, 5e-6, 7e-6, 11e-6, 12e-6};
    double t = 0.0;
    for (int k = 0; k < 6; k++) {
        t = wave_next_break(w, t, 0.0);
        ss_assert_close(t, corners[k], 1e-12, 0);
    }
    ss_test_destroy(&ckt);
    /* left-out and zero edges stand for the output step */
    ckt = ss_test_parse("t\nv1 a 0 pulse(0 1 0 0)\nr1 a 0 1k\n");
    ss_assert_close(wave_value(wave_of(ckt, "v1"), 0.5e-9, 1e-9), 0.5, 1e-12, 0);
    ss_assert_close(wave_value(wave_of(ckt, "v1"), 1.0, 1e-9), 1.0, 0, 0); /* no end */
    ss_test_destroy(&ckt);
}

static void test_pwl_form_values(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("t\nv1 a 0 pwl(1m 1 2m 3 4m -1)\nr1 a 0 1k\n");
    const src_wave *w = wave_of(ckt, "v1");
    ss_assert_close(wave_value(w, 0.0, 0.0), 1.0, 0, 0);
    ss_assert_close(wave_value(w, 1.5e-3, 0.0), 2.0, 1e-12, 0);
    ss_assert_close(wave_value(w, 3e-3, 0.0), 1.0, 1e-12, 0);
    ss_assert_close(wave_value(w, 9e-3, 0.0), -1.0, 0, 0);
    ss_assert_close(wave_next_break(w, 1e-3, 0.0), 2e-3, 0, 0);
    ss_assert_close(wave_next_break(w, 0.0, 0.0), 1e-3, 0, 0);
    assert_true(isinf(wave_next_break(w, 4e-3, 0.0)));
    ss_test_destroy(&ckt);
}

static void expect_parse_error(const char *text, const char *message)
{
    char buf[1400];
    ss_test_parse_error(text, buf, sizeof buf);
    if (strcmp(buf, message) != 0) {
        print_error("got      '%s'\nexpected '%s'\n", buf, message);
        fail();
    }
}

static void test_form_and_tran_errors_are_located(void **state)
{
    (void)state;
    expect_parse_error("t\nv1 a 0 pwl(0 0 1m)\nr1 a 0 1\n",
                       "test.cir:2: v1: pwl(T1 V1 T2 V2 ...) takes time-value pairs, got 3 values");
    expect_parse_error("t\nv1 a 0 pwl(0 0 2m 1 1m 2)\nr1 a 0 1\n",
                       "test.cir:2: v1: pwl: time 3 (0.001 s) is not after time 2 (0.002 s)");
    expect_parse_error("t\nv1 a 0 pulse(0 1 0 1u 1u 5u 4u)\nr1 a 0 1\n",
                       "test.cir:2: v1: pulse: rise time + width + fall time (7e-06 s) exceed "
                       "the period 4e-06 s");
    expect_parse_error("t\nv1 a 0 pulse(0 1 -1)\nr1 a 0 1\n",
                       "test.cir:2: v1: pulse: delay must not be negative, got -1");
    expect_parse_error("t\nv1 a 0 sin(0 1 1k) pwl(0 1 1 1)\nr1 a 0 1\n",
                       "test.cir:2: v1: a second time-varying form 'pwl(0 1 1 1)' (one per "
                       "source)");
    expect_parse_error("t\nv1 a 0 sin(0 1 x)\nr1 a 0 1\n",
                       "test.cir:2: v1: bad sin value 3 'x': expected a number with an optional "
                       "SI suffix or a {expression}");
    expect_parse_error("t\nv1 a 0 1\nr1 a 0 1\n.tran 1u\n",
                       "test.cir:4: .tran expects TSTEP TSTOP [TSTART]");
    expect_parse_error("t\nv1 a 0 1\nr1 a 0 1\n.tran 1u 1m 2m\n",
                       "test.cir:4: .tran: start time 0.002 s must be in [0, stop time 0.001 s)");
    expect_parse_error("t\nv1 a 0 1\nr1 a 0 1\n.tran 0 1m\n",
                       "test.cir:4: .tran: step and stop time must be positive (got 0, 0.001 s)");
    expect_parse_error("t\nv1 a 0 1\nr1 a 0 1\n.options tran_method=euler\n",
                       "test.cir:4: .options: tran_method must be trap or gear2, got 'euler'");
    expect_parse_error("t\nv1 a 0 1\nr1 a 0 1\n.large_signal freq=1k thd=2\n",
                       "test.cir:4: .large_signal: unknown field 'thd' (known: freq, amp, "
                       "thd_target_pct)");
    /* no .tran: a clear error, not an empty table */
    ss_circuit *ckt = ss_test_parse("t\nv1 a 0 1\nr1 a 0 1\n");
    ss_table *t = NULL;
    ss_error err = {0};
    assert_int_equal(ss_tran_run(ss_test_sv(ckt), &t, &err), SS_ERR_INPUT);
    assert_null(t);
    ss_assert_contains(err.message, "no .tran analysis");
    ss_test_destroy(&ckt);
}

/* ---- the transient ----------------------------------------------------------------------- */

/* RC low-pass driven by a ramp of rise time tr to V: for t >= tr,
 * v(t) = V (1 - (tau / tr) (exp(tr / tau) - 1) exp(-t / tau)), which is V (1 - exp(-t/tau))
 * up to tr / (2 tau) (first-order RC, standard circuit theory, e.g. Nilsson & Riedel -- from
 * memory; the ramp term by integrating the step response). tau = 1 kOhm x 1 uF = 1 ms. */
static void check_rc_step(const char *method_line, double rel)
{
    char text[512];
    snprintf(text, sizeof text,
             "rc step\nv1 in 0 pulse(0 2 0 1u)\nr1 in out 1k\nc1 out 0 1u\n.tran 0.1m 5m\n%s\n",
             method_line);
    ss_circuit *ckt;
    ss_table *t = run_tran(text, &ckt);
    assert_int_equal(ss_table_rows(t), 51);
    int c_out = col_of(t, "v(out)");
    double tau = 1e-3, tr = 1e-6, worst = 0.0;
    for (int k = 0; k < ss_table_rows(t); k++) {
        double time = ss_table_get(t, k, 0);
        ss_assert_close(time, 0.1e-3 * k, 1e-12, 1e-18); /* exactly on the grid */
        if (time < tr)
            continue;
        double expect = 2.0 * (1.0 - tau / tr * expm1(tr / tau) * exp(-time / tau));
        worst = fmax(worst, fabs(ss_table_get(t, k, c_out) - expect));
    }
    print_message("    RC step %s: worst |error| %.3g V of 2 V\n", method_line, worst);
    assert_true(worst <= rel * 2.0);
    ss_table_destroy(&t);
    ss_test_destroy(&ckt);
}

static void test_rc_step_response_trapezoidal(void **state)
{
    (void)state;
    check_rc_step("* trapezoidal by default", 5e-4);
}

static void test_rc_step_response_gear2(void **state)
{
    (void)state;
    check_rc_step(".options tran_method=gear2", 5e-4);
}

/* LC tank: a 1 mA source in parallel with L = 1 mH and C = 1 uF turns off at t = 0 (1 ns
 * edge), so the tank rings with i_L(0) = 1 mA, v(0) = 0: period 2 pi sqrt(LC) = 198.69 us
 * (standard circuit theory), energy L i^2 / 2 + C v^2 / 2 = 5e-10 J conserved. The trapezoidal
 * rule keeps a lossless tank's energy exactly (its amplification factor for an imaginary
 * eigenvalue has modulus 1 -- Lambert 1991, ch. 3, from memory), so the drift over 100 periods
 * must stay at the Newton-tolerance level. */
typedef struct lc_probe {
    int v_u, i_u;
    double cap_f, ind_h;
    double e_min, e_max;
    double last_t, last_v;
    double first_cross, last_cross;
    int n_cross;
} lc_probe;

static int lc_point(void *vctx, long k, double t_s, const double *x)
{
    (void)k;
    lc_probe *p = vctx;
    double v = x[p->v_u], i = x[p->i_u];
    if (t_s > 1e-6) { /* after the source's edge */
        double e = 0.5 * p->cap_f * v * v + 0.5 * p->ind_h * i * i;
        p->e_min = fmin(p->e_min, e);
        p->e_max = fmax(p->e_max, e);
        if (p->last_v < 0.0 && v >= 0.0) { /* upward zero crossing, interpolated */
            double tc = p->last_t + (t_s - p->last_t) * (-p->last_v) / (v - p->last_v);
            if (p->n_cross == 0)
                p->first_cross = tc;
            p->last_cross = tc;
            p->n_cross++;
        }
    }
    p->last_t = t_s;
    p->last_v = v;
    return 0;
}

static void test_lc_period_and_energy_over_100_periods(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("lc tank\ni1 0 a pulse(1m 0 0 1n)\nl1 a 0 1m\nc1 a 0 1u\n");
    double period = 2.0 * SS_PI * sqrt(1e-3 * 1e-6);
    lc_probe p = {0};
    p.cap_f = 1e-6;
    p.ind_h = 1e-3;
    p.e_min = HUGE_VAL;
    p.e_max = 0.0;
    ss_error err = {0};
    assert_int_equal(solver_prepare(ss_test_sv(ckt), &err), SS_OK);
    p.v_u = circuit_find_node(ckt, "a") - 1;
    p.i_u = ss_test_sv(ckt)->elem[circuit_find_elem(ckt, "l1")].branch;
    tran_cfg cfg = {.tstep_s = period / 200,
                    .tstop_s = 101 * period,
                    .method = TRAN_TRAP,
                    .on_point = lc_point,
                    .ctx = &p};
    tran_stats s;
    ss_status st = tran_run(ss_test_sv(ckt), &cfg, &s, &err);
    if (st != SS_OK)
        print_error("%s\n", err.message);
    assert_int_equal(st, SS_OK);
    assert_true(p.n_cross >= 100);
    double measured = (p.last_cross - p.first_cross) / (p.n_cross - 1);
    double e0 = 0.5 * 1e-3 * 1e-3 * 1e-3;
    print_message("    LC: period %.9g s (exact %.9g), energy %.9g .. %.9g J (exact %.9g), "
                  "%ld steps, %ld rejected\n",
                  measured, period, p.e_min, p.e_max, e0, s.steps, s.rejected_lte);
    ss_assert_close(measured, period, 2e-4, 0);
    ss_assert_close(p.e_min, e0, 1e-4, 0);
    ss_assert_close(p.e_max, e0, 1e-4, 0);
    assert_int_equal(s.allocs_in_loop, 0); /* setup allocates, the stepping loop does not */
    ss_test_destroy(&ckt);
}

/* Tighter truncation-error tolerance, smaller error: the step control converges. */
static void test_rc_step_error_follows_tolerance(void **state)
{
    (void)state;
    check_rc_step(".options tran_tol_rel=1e-7 tran_tol_v=1e-9", 1e-5);
}

/* The output grid is stepped on exactly, and a PWL corner lands exactly: a resistive divider
 * of a PWL source is the PWL value / 2 at every output time, corners included. */
static void test_pwl_divider_exact_on_grid(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *t = run_tran("pwl divider\nv1 a 0 pwl(0 0 0.35m 1 1m -2 1.3m 0)\nr1 a b 1k\n"
                           "r2 b 0 1k\n.tran 0.05m 2m 0.1m\n",
                           &ckt);
    assert_int_equal(ss_table_rows(t), 39); /* 0.1m .. 2m */
    const src_wave *w = wave_of(ckt, "v1");
    int cb = col_of(t, "v(b)"), ca = col_of(t, "v(a)");
    for (int k = 0; k < ss_table_rows(t); k++) {
        double time = ss_table_get(t, k, 0);
        ss_assert_close(time, 0.1e-3 + 0.05e-3 * k, 1e-12, 0);
        ss_assert_close(ss_table_get(t, k, ca), wave_value(w, time, 0.0), 1e-9, 1e-12);
        ss_assert_close(ss_table_get(t, k, cb), 0.5 * wave_value(w, time, 0.0), 1e-9, 1e-12);
    }
    ss_table_destroy(&t);
    ss_test_destroy(&ckt);
}

/* Depletion charge Q(v) = CJ VJ (1 - (1 - v/VJ)^(1-M)) / (1 - M) (the integral of the
 * capacitance; docs/transient.md), M = 1/2 here. */
static double q_dep(double v, double cj, double vj)
{
    return 2.0 * cj * vj * (1.0 - sqrt(1.0 - v / vj));
}

/* Charge conservation: node m sits between C1 (1 nF) and a reverse-biased junction
 * capacitance (CJO 1 nF, VJ 0.7 V, M 0.5) with no resistive path worth the name. Its total
 * charge C1 (v_m - v_in) - Q_D(-v_m) stays 0, so on the pulse's 2 V plateau v_m solves
 * C1 (v_m - 2) = Q_D(-v_m), and after the pulse v_m returns to 0. A method that integrated
 * C(v) dv/dt instead of the charge would drift (Nagel 1975 discusses this -- from memory). */
static void test_charge_returns_after_pulse(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *t = run_tran("charge\nv1 in 0 pulse(0 2 10u 1u 1u 20u)\nc1 in m 1n\n"
                           "d1 0 m dcap\n.model dcap d (is=1e-15 cjo=1n vj=0.7 m=0.5)\n"
                           ".tran 0.5u 60u\n",
                           &ckt);
    int cm = col_of(t, "v(m)");
    /* plateau value by bisection of the charge balance */
    double lo = 0.0, hi = 2.0;
    for (int it = 0; it < 200; it++) {
        double mid = 0.5 * (lo + hi);
        double f = 1e-9 * (mid - 2.0) - q_dep(-mid, 1e-9, 0.7);
        if (f < 0.0)
            lo = mid;
        else
            hi = mid;
    }
    double v_plateau = 0.5 * (lo + hi);
    int k_plateau = 40, k_end = ss_table_rows(t) - 1; /* 20 us and 60 us */
    ss_assert_close(ss_table_get(t, k_plateau, 0), 20e-6, 1e-9, 0);
    print_message("    charge: v(m) plateau %.12g (closed form %.12g), after %.3g V\n",
                  ss_table_get(t, k_plateau, cm), v_plateau, ss_table_get(t, k_end, cm));
    ss_assert_close(ss_table_get(t, k_plateau, cm), v_plateau, 1e-7, 0);
    ss_assert_close(ss_table_get(t, k_end, cm), 0.0, 0, 1e-7);
    ss_table_destroy(&t);
    ss_test_destroy(&ckt);
}

/* ---- harmonics --------------------------------------------------------------------------- */

/* Symmetric hard clipper: sin(theta) clipped at +-sin(a). Quarter-wave symmetry leaves odd
 * sine terms b_k = (4/pi) int_0^(pi/2) y sin(k theta) d theta:
 * b_1 = (2/pi) (a + sin a cos a),
 * b_k = (4/pi) [ (sin((k-1)a)/(k-1) - sin((k+1)a)/(k+1)) / 2 + sin(a) cos(k a) / k ], k odd
 * (derived here; checked against numerical quadrature with scipy.integrate.quad). The DFT of
 * 4096 samples of one period must reproduce them and the THD over harmonics 2..10. */
static void test_hard_clipper_fourier_series(void **state)
{
    (void)state;
    enum { N = 4096 };
    static double x[N];
    double a = 0.7, c = sin(a);
    for (int j = 0; j < N; j++) {
        double v = sin(2.0 * SS_PI * j / N);
        x[j] = v > c ? c : (v < -c ? -c : v);
    }
    double amp[11], ph[11], b[11] = {0};
    thd_harmonics(x, N, 10, amp, ph);
    b[1] = 2.0 / SS_PI * (a + sin(a) * cos(a));
    for (int k = 3; k <= 9; k += 2)
        b[k] = 4.0 / SS_PI *
               (0.5 * (sin((k - 1) * a) / (k - 1) - sin((k + 1) * a) / (k + 1)) +
                sin(a) * cos(k * a) / k);
    double s2 = 0.0;
    for (int k = 1; k <= 10; k++) {
        ss_assert_close(amp[k], fabs(b[k]), 1e-5, 1e-9);
        if (k >= 2)
            s2 += b[k] * b[k];
        if (k % 2 == 1) /* a sine (phase 0) or its negative (180) */
            ss_assert_close(fabs(ph[k]), b[k] > 0.0 ? 0.0 : 180.0, 0, 1e-6);
    }
    ss_assert_close(thd_ratio(amp, 10), sqrt(s2) / b[1], 1e-5, 0);
    print_message("    clipper at sin(0.7): THD %.6f %% (closed form %.6f %%)\n",
                  100.0 * thd_ratio(amp, 10), 100.0 * sqrt(s2) / b[1]);
}

/* Modified Bessel function I_k(x) by its series sum_m (x/2)^(2m+k) / (m! (m+k)!)
 * (M. Abramowitz, I. A. Stegun, Handbook of Mathematical Functions, 1964, eq. 9.6.10 -- from
 * memory; the values agree with scipy.special.iv to 1e-15 for these x). */
static double bessel_i(int k, double x)
{
    double term = 1.0;
    for (int j = 1; j <= k; j++)
        term *= 0.5 * x / j;
    double sum = 0.0;
    for (int m = 0; m < 60; m++) {
        sum += term;
        term *= 0.25 * x * x / ((m + 1.0) * (m + 1.0 + k));
    }
    return sum;
}

/* exp(x sin t) = I0(x) + 2 sum_k>=1 I_k(x) (+-sin or +-cos)(k t) (A&S 9.6.34 with
 * t -> t - pi/2, from memory):
 * harmonic k of I0 exp(x sin t) has amplitude 2 I0 I_k(x), so A_k / A_1 = I_k(x) / I_1(x);
 * for small x, I_k(x) ~ (x/2)^k / k!, hence A_2 / A_1 ~ (x^2/8) / (x/2) = x/4. */
static double exp_thd(double x)
{
    double s = 0.0;
    for (int k = 2; k <= 10; k++)
        s += bessel_i(k, x) * bessel_i(k, x);
    return sqrt(s) / bessel_i(1, x);
}

static void check_exponential_harmonics(const char *netlist, double amp_v, double tol)
{
    ss_circuit *ckt = ss_test_parse(netlist);
    double thd_pct = 0.0;
    ss_table *h = NULL, *w = NULL;
    ss_error err = {0};
    ss_status st = ss_stage_thd(ss_test_sv(ckt), amp_v, 1e3, &thd_pct, &h, &w, &err);
    if (st != SS_OK)
        print_error("%s\n", err.message);
    assert_int_equal(st, SS_OK);
    double x = amp_v / VT_300K15;
    print_message("    x = %.5f: A2/A1 %.9f (I2/I1 %.9f, x/4 %.9f), THD %.6f %% (%.6f %%)\n", x,
                  ss_table_get(h, 1, 2) / ss_table_get(h, 0, 2), bessel_i(2, x) / bessel_i(1, x),
                  x / 4, thd_pct, 100.0 * exp_thd(x));
    for (int k = 2; k <= 4; k++)
        ss_assert_close(ss_table_get(h, k - 1, 2) / ss_table_get(h, 0, 2),
                        bessel_i(k, x) / bessel_i(1, x), tol, 0);
    ss_assert_close(thd_pct, 100.0 * exp_thd(x), tol, 0);
    ss_assert_close(ss_table_get(h, 1, 1), 2e3, 1e-12, 0); /* freq_hz of harmonic 2 */
    /* the waveform table: 3 periods of 256 points, the input column the drive itself */
    assert_int_equal(ss_table_rows(w), 3 * 256);
    assert_int_equal(ss_table_cols(w), 3);
    for (int r = 0; r < ss_table_rows(w); r += 64) {
        double tt = ss_table_get(w, r, 0);
        ss_assert_close(ss_table_get(w, r, 1) - ss_table_get(w, 0, 1),
                        amp_v * sin(2.0 * SS_PI * 1e3 * tt) -
                            amp_v * sin(2.0 * SS_PI * 1e3 * ss_table_get(w, 0, 0)),
                        1e-9, 1e-12);
    }
    ss_table_destroy(&h);
    ss_table_destroy(&w);
    ss_test_destroy(&ckt);
}

/* A junction driven by V0 + Va sin: i = IS exp((V0 + Va sin)/Vt) - IS, read out exactly by a
 * current-controlled voltage source (1 kV/A); no capacitance, so the steady state is the
 * static nonlinearity sampled and the ratios are exact up to the DFT. */
static void test_diode_harmonic_ratios_follow_bessel(void **state)
{
    (void)state;
    check_exponential_harmonics("diode\nvin a 0 dc 0.6\nvs a k 0\nd1 k 0 dx\nh1 out 0 vs 1k\n"
                                ".model dx d (is=1e-14)\n.stage in=vin out=out\n",
                                5e-3, 1e-6);
}

/* The Ebers-Moll transistor (default card: VAF, IKF infinite, ISE = ISC = 0) with its base
 * driven and a small collector resistor: Ic = IS exp(Vbe/Vt), so v(c) = VCC - RC Ic carries
 * the same ratios (the collector junction is reverse-biased by 4 V: exp(-155) is nothing). */
static void test_ebers_moll_stage_harmonic_ratios(void **state)
{
    (void)state;
    check_exponential_harmonics("em stage\nvcc vcc 0 5\nvin b 0 dc 0.72\nq1 c b 0 qx\n"
                                "rc vcc c 100\n.model qx npn (is=1e-16)\n.stage in=vin out=c\n",
                                8e-3, 1e-6);
}

/* The amplitude for a THD of 1 %: from the Bessel ratios, x solves exp_thd(x) = 0.01. */
static void test_amplitude_for_one_percent_thd(void **state)
{
    (void)state;
    double lo = 1e-4, hi = 1.0;
    for (int it = 0; it < 200; it++) {
        double mid = 0.5 * (lo + hi);
        if (exp_thd(mid) < 0.01)
            lo = mid;
        else
            hi = mid;
    }
    double a_expect = 0.5 * (lo + hi) * VT_300K15;
    ss_circuit *ckt = ss_test_parse("diode\nvin a 0 dc 0.6\nvs a k 0\nd1 k 0 dx\n"
                                    "h1 out 0 vs 1k\n.model dx d (is=1e-14)\n"
                                    ".stage in=vin out=out\n");
    double a = 0.0;
    ss_error err = {0};
    assert_int_equal(ss_stage_amplitude_at_thd(ss_test_sv(ckt), 1.0, 1e3, &a, &err), SS_OK);
    print_message("    1 %% THD at %.9g V (Bessel: %.9g V)\n", a, a_expect);
    ss_assert_close(a, a_expect, 2e-3, 0);
    ss_test_destroy(&ckt);
}

/* ---- clipping ----------------------------------------------------------------------------- */

/* The output for input u, from a fresh parse with the source's DC value overridden and the
 * operating-point solver: the stage's DC transfer, independent of the transfer search. */
static double op_vout(const char *text, const char *src, const char *out, double u)
{
    char val[64], label[64];
    snprintf(val, sizeof val, "%.17g", u);
    ss_override ov = {src, val};
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    assert_int_equal(ss_circuit_parse_text(text, strlen(text), "t.cir", &ov, 1, &ckt, &err), SS_OK);
    ss_table *op = NULL;
    if (ss_op_solve(ss_test_sv(ckt), &op, NULL, &err) != SS_OK) {
        print_error("op at %s = %g: %s\n", src, u, err.message);
        fail();
    }
    snprintf(label, sizeof label, "v(%s)", out);
    double v = ss_test_opval(op, label);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
    return v;
}

static double op_slope(const char *text, const char *src, const char *out, double u)
{
    const double d = 1e-5; /* central difference: error d^2 v'''/6, far below the tolerance */
    return (op_vout(text, src, out, u + d) - op_vout(text, src, out, u - d)) / (2.0 * d);
}

/* Onset on one side by marching and bisecting the op-solver transfer; returns the output
 * excursion vout(u*) - vout(u0) where |slope| first falls to 0.9 |slope(u0)|. */
static double op_onset(const char *text, const char *src, const char *out, double u0, double dir,
                       double step)
{
    double g0 = fabs(op_slope(text, src, out, u0));
    double a = 0.0, b = 0.0;
    for (int k = 1; k < 2000; k++) {
        b = dir * step * k;
        if (fabs(op_slope(text, src, out, u0 + b)) <= 0.9 * g0)
            break;
        a = b;
    }
    for (int it = 0; it < 40; it++) {
        double m = 0.5 * (a + b);
        if (fabs(op_slope(text, src, out, u0 + m)) <= 0.9 * g0)
            b = m;
        else
            a = m;
    }
    return op_vout(text, src, out, u0 + b) - op_vout(text, src, out, u0);
}

static ss_table *clipping_of(const char *text, ss_circuit **out_ckt)
{
    ss_circuit *ckt = ss_test_parse(text);
    ss_table *t = NULL;
    ss_error err = {0};
    ss_status st = ss_stage_clipping(ss_test_sv(ckt), &t, &err);
    if (st != SS_OK)
        print_error("%s\n", err.message);
    assert_int_equal(st, SS_OK);
    *out_ckt = ckt;
    return t;
}

/* Emitter follower, BF huge so Ic = Ie: vout = RE Ic, vin = Vbe + vout, slope
 * RE / (RE + Vt/Ic). It falls to 0.9 of its bias value g0 where Vt/Ic = (RE + Vt/Ic0)/0.9 - RE
 * (derived here): the negative swing is RE (Ic0 - Ic there). The positive side saturates
 * through the 10 kOhm base resistor. Both against the op-solver's DC transfer too, and
 * confirmed by the transient's peaks. */
static void test_emitter_follower_clipping(void **state)
{
    (void)state;
    const char *text = "follower\nvcc vcc 0 10\nvin s 0 dc 5\nrs s b 10k\nq1 vcc b e qf\n"
                       "re e 0 1k\n.model qf npn (is=1e-16 bf=1e9)\n.stage in=vin out=e\n";
    ss_circuit *ckt;
    ss_table *t = clipping_of(text, &ckt);
    double v0 = ss_test_sv(ckt)->x_op[circuit_find_node(ckt, "e") - 1], re = 1e3, vt = VT_300K15;
    double ic0 = v0 / re, ic1 = vt / ((re + vt / ic0) / 0.9 - re);
    double neg = ss_table_lookup(t, "swing_neg_v", 0), pos = ss_table_lookup(t, "swing_pos_v", 0);
    double neg_op = -op_onset(text, "vin", "e", 5.0, -1.0, 0.05);
    double pos_op = op_onset(text, "vin", "e", 5.0, 1.0, 0.05);
    print_message("    follower: swing_neg %.9g V (closed form %.9g, op transfer %.9g), "
                  "swing_pos %.9g V (op transfer %.9g), transient %.9g / %.9g\n",
                  neg, re * (ic0 - ic1), neg_op, pos, pos_op,
                  ss_table_lookup(t, "swing_neg_tran_v", 0),
                  ss_table_lookup(t, "swing_pos_tran_v", 0));
    ss_assert_close(neg, re * (ic0 - ic1), 1e-5, 0);
    ss_assert_close(neg, neg_op, 1e-5, 0);
    ss_assert_close(pos, pos_op, 1e-4, 0);
    ss_assert_close(ss_table_lookup(t, "swing_neg_tran_v", 0), neg, 1e-4, 0);
    ss_assert_close(ss_table_lookup(t, "swing_pos_tran_v", 0), pos, 1e-4, 0);
    /* the input there: Vbe + vout with Vbe = Vt ln(Ic / IS) */
    double vout1 = v0 - neg;
    ss_assert_close(ss_table_lookup(t, "vin_at_swing_neg_v", 0),
                    5.0 - (vout1 + vt * log(vout1 / re / 1e-16)), 1e-4, 0);
    ss_table_destroy(&t);
    ss_test_destroy(&ckt);
}

/* Common-emitter stage, DC-coupled: cut-off on the way up, saturation on the way down, both
 * against the op-solver's DC transfer and the transient. */
static const char CE_DC[] = "ce\nvcc vcc 0 10\nvin b 0 dc 1.6\nq1 c b e qn\nrc vcc c 4.7k\n"
                            "re e 0 1k\n.model qn npn (is=1e-15 bf=150 vaf=80)\n"
                            ".stage in=vin out=c\n";

static void test_common_emitter_clipping(void **state)
{
    (void)state;
    ss_circuit *ckt;
    ss_table *t = clipping_of(CE_DC, &ckt);
    double pos = ss_table_lookup(t, "swing_pos_v", 0), neg = ss_table_lookup(t, "swing_neg_v", 0);
    double pos_op = op_onset(CE_DC, "vin", "c", 1.6, -1.0, 0.01);
    double neg_op = -op_onset(CE_DC, "vin", "c", 1.6, 1.0, 0.01);
    print_message("    CE: swing_pos %.9g V (op %.9g), swing_neg %.9g V (op %.9g), transient "
                  "%.9g / %.9g, gain %.6g\n",
                  pos, pos_op, neg, neg_op, ss_table_lookup(t, "swing_pos_tran_v", 0),
                  ss_table_lookup(t, "swing_neg_tran_v", 0), ss_table_lookup(t, "qs_gain", 0));
    ss_assert_close(pos, pos_op, 1e-4, 0);
    ss_assert_close(neg, neg_op, 1e-4, 0);
    ss_assert_close(ss_table_lookup(t, "swing_pos_tran_v", 0), pos, 1e-4, 0);
    ss_assert_close(ss_table_lookup(t, "swing_neg_tran_v", 0), neg, 1e-4, 0);
    ss_table_destroy(&t);
    ss_test_destroy(&ckt);
}

/* The same CE stage, AC-coupled with a partly bypassed emitter: at 1 kHz the coupling and
 * bypass capacitors are shorts, so its swing equals that of the DC-coupled circuit with each
 * of them replaced by a battery at its operating-point voltage (computed with the op solver). */
static void test_ac_coupled_stage_clips_like_its_battery_equivalent(void **state)
{
    (void)state;
    const char *ac = "ce ac\nvcc vcc 0 10\nvsig s 0 dc 0 ac 1\nc1 s b 10u\nr1 vcc b 47k\n"
                     "r2 b 0 10k\nq1 c b e qn\nrc vcc c 4.7k\nre1 e e2 220\nre2 e2 0 820\n"
                     "ce e2 0 220u\nc2 c out 10u\nrl out 0 47k\n"
                     ".model qn npn (is=1e-15 bf=150 vaf=80)\n.stage in=vsig out=out\n";
    ss_circuit *ckt;
    ss_table *t = clipping_of(ac, &ckt);
    const double *x = ss_test_sv(ckt)->x_op;
    double vb = x[circuit_find_node(ckt, "b") - 1], ve2 = x[circuit_find_node(ckt, "e2") - 1];
    double vc = x[circuit_find_node(ckt, "c") - 1];
    /* vb1, vbe, vb2: voltage sources standing for the held capacitors */
    char dc[1024];
    snprintf(dc, sizeof dc,
             "ce batteries\nvcc vcc 0 10\nvsig s 0 dc 0\nvb1 b s %.17g\nr1 vcc b 47k\n"
             "r2 b 0 10k\nq1 c b e qn\nrc vcc c 4.7k\nre1 e e2 220\nre2 e2 0 820\n"
             "vbe e2 0 %.17g\nvb2 c out %.17g\nrl out 0 47k\n"
             ".model qn npn (is=1e-15 bf=150 vaf=80)\n",
             vb, ve2, vc);
    double pos_op = op_onset(dc, "vsig", "out", 0.0, -1.0, 0.005);
    double neg_op = -op_onset(dc, "vsig", "out", 0.0, 1.0, 0.005);
    double pos = ss_table_lookup(t, "swing_pos_v", 0), neg = ss_table_lookup(t, "swing_neg_v", 0);
    print_message("    AC-coupled CE: swing_pos %.9g (batteries %.9g), swing_neg %.9g (%.9g), "
                  "transient %.6g / %.6g\n",
                  pos, pos_op, neg, neg_op, ss_table_lookup(t, "swing_pos_tran_v", 0),
                  ss_table_lookup(t, "swing_neg_tran_v", 0));
    ss_assert_close(pos, pos_op, 1e-4, 0);
    ss_assert_close(neg, neg_op, 1e-4, 0);
    /* the transient at the onset amplitude: within a few per cent (the coupling capacitors
     * charge a little as the stage distorts, the bias shifts) */
    ss_assert_close(ss_table_lookup(t, "swing_pos_tran_v", 0), pos, 0.05, 0);
    ss_assert_close(ss_table_lookup(t, "swing_neg_tran_v", 0), neg, 0.05, 0);
    ss_table_destroy(&t);
    ss_test_destroy(&ckt);
}

/* Small-signal transient against the AC analysis: a tiny sine through a stage whose junction
 * depletion and diffusion charges set its response must come out with the AC gain and phase
 * at that frequency, since the AC capacitances are the derivatives of the charges the
 * transient integrates (models.md; docs/transient.md sec. 2). The trapezoidal rule at 256
 * points per period warps the frequency by (w h)^2/12 = 5e-5 (Lambert 1991 -- from memory). */
static void check_tran_matches_ac(const char *netlist, double freq_hz, double amp)
{
    ss_circuit *ckt = ss_test_parse(netlist);
    ss_error err = {0};
    double complex g;
    double zin, zout;
    assert_int_equal(stage_at_frequency(ss_test_sv(ckt), freq_hz, &g, &zin, &zout, &err), SS_OK);
    ss_table *h = NULL;
    double thd;
    ss_status st = ss_stage_thd(ss_test_sv(ckt), amp, freq_hz, &thd, &h, NULL, &err);
    if (st != SS_OK)
        print_error("%s\n", err.message);
    assert_int_equal(st, SS_OK);
    double mag = ss_table_get(h, 0, 2) / amp, ph = ss_table_get(h, 0, 4);
    double ph_ac = carg(g) * 180.0 / SS_PI;
    print_message("    %g Hz: transient |gain| %.7g phase %.5f deg, AC %.7g %.5f deg\n",
                  freq_hz, mag, ph, cabs(g), ph_ac);
    ss_assert_close(mag, cabs(g), 1e-4, 0);
    double dph = fmod(ph - ph_ac + 540.0, 360.0) - 180.0;
    ss_assert_close(dph, 0.0, 0, 0.01);
    ss_table_destroy(&h);
    ss_test_destroy(&ckt);
}

static void test_small_signal_transient_matches_ac(void **state)
{
    (void)state;
    /* CE stage, DC-coupled, its upper corner set by the transistor's charges and RB. VAF is
     * left infinite: with a finite one the forward diffusion charge TF IF/qb also depends on
     * Vbc, a transcapacitance of about TF Ic / VAF that the transient integrates and the AC
     * model (Cpi = TF dIF/qb / dVbe, models.md) leaves out -- 0.1 % of this gain at VAF 60 */
    const char *ce = "ce charges\nvcc vcc 0 10\nvin s 0 dc 1.6\nrs s b 2k\nq1 c b e qc\n"
                     "rc vcc c 4.7k\nre e 0 1k\ncl c 0 2p\n"
                     ".model qc npn (is=1e-15 bf=150 ikf=50m rb=50 cje=12p vje=0.7 mje=0.35 "
                     "cjc=5p vjc=0.6 mjc=0.4 fc=0.5 tf=0.5n tr=30n)\n.stage in=vin out=c\n";
    check_tran_matches_ac(ce, 3e6, 1e-5);
    check_tran_matches_ac(ce, 20e6, 1e-5);
    /* forward-biased diode with transit time and depletion charge behind 1 kOhm */
    const char *d = "diode charges\nvin a 0 dc 1.0\nr1 a k 1k\nd1 k 0 dq\n"
                    ".model dq d (is=1e-14 n=1.2 cjo=20p vj=0.8 m=0.4 tt=20n)\n"
                    ".stage in=vin out=k\n";
    check_tran_matches_ac(d, 2e6, 1e-5);
}

/* ---- the waveform plot, error paths, allocation failures --------------------------------- */

/* A mkstemp template in $TMPDIR (else the system's temporary folder). */
static void temp_path(char *buf, size_t len, const char *stem)
{
    const char *base = getenv("TMPDIR");
    snprintf(buf, len, "%s/%s_XXXXXX", base && base[0] ? base : P_tmpdir, stem);
}

static char *slurp(const char *path)
{
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    static char buf[1 << 20];
    size_t n = fread(buf, 1, sizeof buf - 1, f);
    buf[n] = '\0';
    fclose(f);
    return buf;
}

static const char DIODE_STAGE[] = "clamp & limiter\nvin a 0 dc 0.6 sin(0.6 0.05 1k)\nr1 a k 100\n"
                                  "d1 k 0 dx\nc1 k 0 1n\n.model dx d (is=1e-14 cjo=2p tt=1n)\n"
                                  ".tran 10u 2m\n.stage in=vin out=k\n";

static void test_wave_plot_written_and_checked(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse(DIODE_STAGE);
    ss_table *w = NULL;
    ss_error err = {0};
    assert_int_equal(ss_stage_thd(ss_test_sv(ckt), 0.05, 1e3, NULL, NULL, &w, &err), SS_OK);
    char path[1024];
    temp_path(path, sizeof path, "stagesim_wave");
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    close(fd);
    assert_int_equal(ss_plot_write_wave(ss_test_sv(ckt), w, NULL, NULL, path, &err), SS_OK);
    const char *svg = slurp(path);
    ss_assert_contains(svg, "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\"");
    ss_assert_contains(svg, "clamp &amp; limiter");
    ss_assert_contains(svg, "in(vin) (V)");
    ss_assert_contains(svg, "v(k) (V)");
    ss_assert_contains(svg, "Time (ms)");
    assert_non_null(strstr(strstr(svg, "<polyline"), "</svg>"));
    assert_non_null(strstr(strstr(svg, "<polyline") + 1, "<polyline")); /* two traces */
    /* a column that is not there is named */
    assert_int_equal(ss_plot_write_wave(ss_test_sv(ckt), w, "v(nowhere)", NULL, path, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "no column 'v(nowhere)'");
    remove(path);
    /* the .tran table plots too, with the source's node standing for the input */
    ss_table *t = NULL;
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_tran_run(ss_test_sv(ckt), &t, &err), SS_OK);
    assert_int_equal(ss_plot_write_wave(ss_test_sv(ckt), t, NULL, NULL, path, &err), SS_OK);
    ss_assert_contains(slurp(path), "v(a) (V)");
    remove(path);
    ss_table_destroy(&t);
    ss_table_destroy(&w);
    ss_test_destroy(&ckt);
}

/* A truncation-error tolerance no step can meet -- below the rounding of double precision --
 * ends in a located error naming the time and the tolerances. */
static void test_step_floor_is_a_located_error(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("rc\nv1 in 0 sin(0 1 1k)\nr1 in out 1k\nc1 out 0 1u\n"
                                    ".tran 10u 1m\n.options tran_tol_rel=1e-18 tran_tol_v=1e-30\n");
    ss_table *t = NULL;
    ss_error err = {0};
    assert_int_equal(ss_tran_run(ss_test_sv(ckt), &t, &err), SS_ERR_NO_CONVERGENCE);
    assert_null(t);
    assert_int_equal(err.line, 5);
    ss_assert_contains(err.message,
                       "transient: tran_tol_rel=1e-18 and tran_tol_v=1e-30 cannot be held at t = ");
    ss_assert_contains(err.message, "the error estimate at node '");
    ss_test_destroy(&ckt);
}

/* The large-signal calls need a stage and sane arguments. */
static void test_large_signal_argument_errors(void **state)
{
    (void)state;
    ss_circuit *ckt = ss_test_parse("t\nv1 a 0 1\nr1 a 0 1k\n");
    ss_table *t = NULL;
    ss_error err = {0};
    assert_int_equal(ss_stage_clipping(ss_test_sv(ckt), &t, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "need a stage");
    ss_test_destroy(&ckt);
    ckt = ss_test_parse(DIODE_STAGE);
    double thd;
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_stage_thd(ss_test_sv(ckt), -1.0, 1e3, &thd, NULL, NULL, &err), SS_ERR_INPUT);
    ss_assert_contains(err.message, "must be positive");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_solver_set_thd_target(ss_test_sv(ckt), 150.0, &err), SS_ERR_INPUT);
    double f, a, p;
    ss_solver_large_signal(ss_test_sv(ckt), &f, &a, &p); /* defaults: 1 kHz, no amplitude, 1 % */
    ss_assert_close(f, 1e3, 0, 0);
    ss_assert_close(a, 0.0, 0, 0);
    ss_assert_close(p, 1.0, 0, 0);
    ss_test_destroy(&ckt);
    ckt = ss_test_parse("t\nv1 a 0 1\nr1 a 0 1k\n.stage in=v1 out=a\n"
                        ".large_signal freq=2k amp={5m*2} thd_target_pct=3\n");
    ss_solver_large_signal(ss_test_sv(ckt), &f, &a, &p);
    ss_assert_close(f, 2e3, 0, 0);
    ss_assert_close(a, 0.01, 1e-15, 0);
    ss_assert_close(p, 3.0, 0, 0);
    ss_analysis_flags fl;
    ss_circuit_analyses(ckt, &fl);
    assert_int_equal(fl.large_signal, 1);
    ss_test_destroy(&ckt);
}

/* Allocation-failure sweep through parse -> .tran -> clipping -> THD -> plot: every failing run
 * ends in a clean error (the sanitizer build checks for leaks and invalid accesses). */
static ss_status alloc_run_once(const char *path)
{
    ss_circuit *ckt = NULL;
    ss_solver *sv = NULL;
    ss_table *t = NULL, *clip = NULL, *h = NULL, *w = NULL;
    ss_error err = {0};
    double thd = 0.0;
    ss_status s =
        ss_circuit_parse_text(DIODE_STAGE, strlen(DIODE_STAGE), "a.cir", NULL, 0, &ckt, &err);
    if (s == SS_OK)
        s = ss_solver_create(ckt, &sv, &err);
    if (s == SS_OK)
        s = ss_tran_run(sv, &t, &err);
    if (s == SS_OK)
        s = ss_stage_clipping(sv, &clip, &err);
    if (s == SS_OK)
        s = ss_stage_thd(sv, 0.02, 1e3, &thd, &h, &w, &err);
    if (s == SS_OK)
        s = ss_plot_write_wave(sv, w, NULL, NULL, path, &err);
    if (s != SS_OK) {
        assert_true(err.code != SS_OK);
        assert_true(err.message[0] != '\0');
    }
    ss_table_destroy(&t);
    ss_table_destroy(&clip);
    ss_table_destroy(&h);
    ss_table_destroy(&w);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    return s;
}

static void test_every_allocation_failure_is_clean(void **state)
{
    (void)state;
    char path[1024];
    temp_path(path, sizeof path, "stagesim_walloc");
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    close(fd);
    long n;
    int nomem_seen = 0;
    for (n = 0; n < 100000; n++) {
        ss_alloc_fail_at(n);
        ss_status s = alloc_run_once(path);
        if (s == SS_OK)
            break;
        nomem_seen += s == SS_ERR_NOMEM;
    }
    ss_alloc_fail_at(-1);
    remove(path);
    assert_true(n > 10);
    assert_true(nomem_seen > 0);
    print_message("    allocation sweep: %ld failure points, all clean\n", n);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_sin_form_values),
        cmocka_unit_test(test_pulse_form_values_and_corners),
        cmocka_unit_test(test_pwl_form_values),
        cmocka_unit_test(test_form_and_tran_errors_are_located),
        cmocka_unit_test(test_rc_step_response_trapezoidal),
        cmocka_unit_test(test_rc_step_response_gear2),
        cmocka_unit_test(test_lc_period_and_energy_over_100_periods),
        cmocka_unit_test(test_rc_step_error_follows_tolerance),
        cmocka_unit_test(test_pwl_divider_exact_on_grid),
        cmocka_unit_test(test_charge_returns_after_pulse),
        cmocka_unit_test(test_hard_clipper_fourier_series),
        cmocka_unit_test(test_diode_harmonic_ratios_follow_bessel),
        cmocka_unit_test(test_ebers_moll_stage_harmonic_ratios),
        cmocka_unit_test(test_amplitude_for_one_percent_thd),
        cmocka_unit_test(test_emitter_follower_clipping),
        cmocka_unit_test(test_common_emitter_clipping),
        cmocka_unit_test(test_ac_coupled_stage_clips_like_its_battery_equivalent),
        cmocka_unit_test(test_small_signal_transient_matches_ac),
        cmocka_unit_test(test_wave_plot_written_and_checked),
        cmocka_unit_test(test_step_floor_is_a_located_error),
        cmocka_unit_test(test_large_signal_argument_errors),
        cmocka_unit_test(test_every_allocation_failure_is_clean),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
