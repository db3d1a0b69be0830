/* AC sweep benchmark: cost per frequency point of ss_ac_sweep_run against the bare KLU work
 * (klu_z_refactor + klu_z_solve) on the very same complex matrix, measured in one run.
 * Usage: bench_ac [NETLIST]   (default: generated circuits only). Prints a table of ratios. */
#define _POSIX_C_SOURCE 200809L
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <suitesparse/klu.h>

#include "analysis/analysis.h"
#include "stagesim/stagesim.h"

#include "bench_util.h"

/* An RC ladder of n sections driven by an AC source: n + 1 nodes. */
static char *rc_ladder(int n, int points)
{
    char title[64], tail[64];
    snprintf(title, sizeof title, "rc ladder %d", n);
    snprintf(tail, sizeof tail, ".ac dec %d 1k 100k\n", points / 2);
    return bench_rc_ladder(title, "vin n0 0 dc 0 ac 1", n, "100", tail, NULL);
}

/* Bare KLU: analyze + factor once, then reps x (refactor + solve) on the circuit's own
 * complex matrix as the last AC point left it. Returns seconds per repetition. */
static double bare_klu_per_point(ss_solver *sv, int reps)
{
    mna *m = sv->mna;
    int n = mna_n(m);
    int *Ap = (int *)mna_colptr(m), *Ai = (int *)mna_rowidx(m);
    double *Az = (double *)mna_zvalues(m);
    klu_common c;
    klu_defaults(&c);
    klu_symbolic *sym = klu_analyze(n, Ap, Ai, &c);
    klu_numeric *num = klu_z_factor(Ap, Ai, Az, sym, &c);
    double complex *b = malloc((size_t)n * sizeof *b);
    double t0 = bench_now_s();
    for (int r = 0; r < reps; r++) {
        for (int i = 0; i < n; i++)
            b[i] = 1.0;
        klu_z_refactor(Ap, Ai, Az, sym, num, &c);
        klu_z_solve(sym, num, n, 1, (double *)b, &c);
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
    ss_table *op = NULL, *ac = NULL;
    if (ss_op_solve(sv, &op, NULL, &err) != SS_OK) {
        fprintf(stderr, "%s: %s\n", label, err.message);
        return 1;
    }
    /* warm up, then time the full sweep (solves + table of every node); sweep and bare KLU
     * are measured alternately three times and the fastest of each kept, so a busy moment on
     * the machine does not land on one side only */
    ss_ac_sweep_run(sv, &ac, &err);
    int points = ss_table_rows(ac);
    ss_table_destroy(&ac);
    int reps = 1;
    double t_sweep = 0.0;
    while (t_sweep < 0.2) {
        double t0 = bench_now_s();
        for (int r = 0; r < reps; r++) {
            ss_ac_sweep_run(sv, &ac, &err);
            ss_table_destroy(&ac);
        }
        t_sweep = bench_now_s() - t0;
        if (t_sweep < 0.2)
            reps *= 2;
    }
    double per_point = HUGE_VAL, bare = HUGE_VAL;
    int bare_reps = (int)(0.3 * points * reps / (t_sweep + 1e-9)) + 10;
    for (int round = 0; round < 3; round++) {
        double t0 = bench_now_s();
        for (int r = 0; r < reps; r++) {
            ss_ac_sweep_run(sv, &ac, &err);
            ss_table_destroy(&ac);
        }
        double pp = (bench_now_s() - t0) / reps / points;
        per_point = pp < per_point ? pp : per_point;
        double b = bare_klu_per_point(sv, bare_reps);
        bare = b < bare ? b : bare;
    }
    printf("%-28s %8d %8d %12.2f %12.2f %8.2f\n", label, sv->n_unknowns, points, per_point * 1e6,
           bare * 1e6, per_point / bare);
    ss_table_destroy(&op);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    return 0;
}

int main(int argc, char **argv)
{
    printf("%-28s %8s %8s %12s %12s %8s\n", "circuit", "unknowns", "points", "us/point",
           "bare_us", "ratio");
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
    int sizes[] = {100, 10000};
    for (size_t i = 0; i < sizeof sizes / sizeof sizes[0]; i++) {
        char label[64];
        snprintf(label, sizeof label, "rc ladder %d nodes", sizes[i] + 1);
        char *t = rc_ladder(sizes[i], 21);
        rc |= bench(label, t);
        free(t);
    }
    return rc;
}
