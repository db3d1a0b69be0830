/* Transient benchmark: accepted time steps per second and the cost per step and per Newton
 * iteration against the bare KLU work (klu_refactor + klu_solve) on the very same real matrix,
 * measured in one run, for a transistor stage and a 10,000-node RC ladder.
 * Usage: bench_tran [NETLIST with .tran]   (default: generated circuits only). */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <suitesparse/klu.h>

#include "analysis/tran.h"
#include "stagesim/stagesim.h"

#include "bench_util.h"

/* A common-emitter stage of our own (invented generic card) driven by a 1 kHz sine: 5 periods,
 * 200 output points per period. */
static const char STAGE[] =
    "bench stage: AC-coupled common emitter\n"
    "vcc vcc 0 12\nvsig s 0 dc 0 sin(0 0.2 1k)\nrs s in 1k\nc1 in b 10u\nr1 vcc b 56k\n"
    "r2 b 0 10k\nq1 c b e qb\nrc vcc c 5.6k\ncbw vcc c 620p\nre1 e e2 390\nre2 e2 0 820\n"
    "ce e2 0 220u\nc2 c out 10u\nrl out 0 47k\n"
    ".model qb npn (is=8e-15 bf=200 vaf=80 ikf=0.1 rb=30 re=0.5 rc=1 cje=10p cjc=4p tf=0.4n "
    "tr=40n)\n.tran 5u 5m\n";

/* An RC ladder of n sections driven by a pulse: n + 1 nodes. */
static char *rc_ladder(int n)
{
    char title[64];
    snprintf(title, sizeof title, "rc ladder %d", n);
    return bench_rc_ladder(title, "vin n0 0 pulse(0 1 0 1u 1u 20u 50u)", n, "10",
                           ".tran 1u 100u\n", NULL);
}

static int on_point(void *ctx, long k, double t_s, const double *x)
{
    (void)ctx;
    (void)k;
    (void)t_s;
    (void)x;
    return 0;
}

/* Bare KLU: analyze + factor once, then reps x (refactor + solve) on the circuit's own real
 * matrix as the last Newton iteration left it. Seconds per repetition. */
static double bare_klu(ss_solver *sv, int reps)
{
    mna *m = sv->mna;
    int n = mna_n(m);
    int *Ap = (int *)mna_colptr(m), *Ai = (int *)mna_rowidx(m);
    double *Ax = mna_values(m);
    klu_common c;
    klu_defaults(&c);
    klu_symbolic *sym = klu_analyze(n, Ap, Ai, &c);
    klu_numeric *num = klu_factor(Ap, Ai, Ax, sym, &c);
    double *b = malloc((size_t)n * sizeof *b);
    double t0 = bench_now_s();
    for (int r = 0; r < reps; r++) {
        for (int i = 0; i < n; i++)
            b[i] = 1.0;
        klu_refactor(Ap, Ai, Ax, sym, num, &c);
        klu_solve(sym, num, n, 1, b, &c);
    }
    double dt = (bench_now_s() - t0) / reps;
    free(b);
    klu_free_numeric(&num, &c);
    klu_free_symbolic(&sym, &c);
    return dt;
}

static int bench(const char *label, const char *text)
{
    ss_circuit *ckt = NULL;
    ss_solver *sv = NULL;
    ss_error err = {0};
    if (ss_circuit_parse_text(text, strlen(text), label, NULL, 0, &ckt, &err) != SS_OK ||
        ss_solver_create(ckt, &sv, &err) != SS_OK) {
        fprintf(stderr, "%s: %s\n", label, err.message);
        ss_circuit_destroy(&ckt);
        return 1;
    }
    tran_cfg cfg = {.tstep_s = ckt->tran.step_s,
                    .tstop_s = ckt->tran.stop_s,
                    .tstart_s = ckt->tran.start_s,
                    .method = ckt->tran.method == 1 ? TRAN_GEAR2 : TRAN_TRAP,
                    .tol_rel = ckt->tran.tol_rel,
                    .tol_v = ckt->tran.tol_v,
                    .on_point = on_point};
    tran_stats s;
    /* warm-up (solves the operating point), then the best of three timed runs, each followed
     * by the bare KLU timing so a busy moment on the machine does not land on one side only */
    if (tran_run(sv, &cfg, &s, &err) != SS_OK) {
        fprintf(stderr, "%s: %s\n", label, err.message);
        return 1;
    }
    double t_run = HUGE_VAL, bare = HUGE_VAL;
    for (int round = 0; round < 3; round++) {
        double t0 = bench_now_s();
        if (tran_run(sv, &cfg, &s, &err) != SS_OK) {
            fprintf(stderr, "%s: %s\n", label, err.message);
            return 1;
        }
        double dt = bench_now_s() - t0;
        t_run = dt < t_run ? dt : t_run;
        int reps = (int)(0.3 * (double)s.newton_iterations / (dt + 1e-9) * 0.2) + 10;
        double b = bare_klu(sv, reps);
        bare = b < bare ? b : bare;
    }
    double per_step = t_run / (double)s.steps, per_iter = t_run / (double)s.newton_iterations;
    printf("%-30s %8d %8ld %10.0f %10.2f %7.2f %10.2f %10.2f %7.2f %6ld\n", label, sv->n_unknowns,
           s.steps, (double)s.steps / t_run, per_step * 1e6,
           (double)s.newton_iterations / (double)s.steps, per_iter * 1e6, bare * 1e6,
           per_iter / bare, s.allocs_in_loop);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    return 0;
}

int main(int argc, char **argv)
{
    printf("%-30s %8s %8s %10s %10s %7s %10s %10s %7s %6s\n", "circuit", "unknowns", "steps",
           "steps/s", "us/step", "it/step", "us/iter", "bare_us", "ratio", "allocs");
    int rc = 0;
    if (argc > 1) {
        char *t = bench_read_file(argv[1]);
        if (!t) {
            fprintf(stderr, "cannot read %s\n", argv[1]);
            return 2;
        }
        rc |= bench(argv[1], t);
        free(t);
    }
    rc |= bench("CE stage, 5 periods", STAGE);
    char *t = rc_ladder(10000);
    rc |= bench("rc ladder 10001 nodes", t);
    free(t);
    return rc;
}
