/* Refine benchmark: the cost of one candidate design in `stagesim refine` -- six free values
 * of the two-transistor geophone preamp (netlists/geophone_preamp.cir), each candidate solved
 * at the nominal point and six corners (beta 0.5x and 2x, -20 and 70 C, supply +-10 %) -- and
 * its ratio to the bare KLU work of one candidate measured in the same run:
 *
 *   1. ss_refine_run on one thread and on every core (no files written): candidates and
 *      circuits (candidate x corner operating points) per second, and per thread;
 *   2. the bare KLU work of one candidate: exactly as many klu_refactor / klu_solve and
 *      klu_z_refactor / klu_z_solve / klu_z_tsolve calls as the one-thread search made per
 *      candidate (counted by wrapping the KLU functions this program links), replayed on
 *      copies of the circuit's matrices, and the ratio of the search's time per candidate to
 *      it.
 * Medians of REPEATS runs (default 3). Usage: bench_refine [NETLIST] [REPEATS]; run it from the
 * repository's top folder (the netlist's .include is relative to it). */
#define _GNU_SOURCE /* RTLD_NEXT */
#include <complex.h>
#include <dlfcn.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <suitesparse/klu.h>

#include "analysis/analysis.h"
#include "stagesim/stagesim.h"

#include "bench_util.h"

/* ---- klu_wrap: counting the KLU calls stagesim makes (as bench_study.c) ------------------ */

#include "klu_count.h"


/* The calls `per` counted over `of` candidates, replayed for `candidates` candidates. */
static void bare_candidates(bare_mats *bm, const klu_counts *per, long candidates, long of)
{
    for (long t = 0; t < candidates; t++)
        bare_replay(bm, per, t % of, of);
}


/* ---- the search ---------------------------------------------------------------------------- */

static void die(const char *what, const ss_error *err)
{
    fprintf(stderr, "bench_refine: %s: %s\n", what, err->message);
    exit(1);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

static double median(double *v, int n)
{
    qsort(v, (size_t)n, sizeof *v, cmp_double);
    return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

static ss_refine_stats run_refine(const char *path, int threads)
{
    ss_refine *r = NULL;
    ss_error err = {0};
    if (ss_refine_create(path, NULL, 0, &r, &err) != SS_OK ||
        ss_refine_set_beta_range(r, 0.5, 2.0, 1, &err) != SS_OK ||
        ss_refine_set_temps(r, -20.0, 70.0, &err) != SS_OK ||
        ss_refine_add_supply_tol(r, "vcc=10%", &err) != SS_OK ||
        ss_refine_set_threads(r, threads, &err) != SS_OK || ss_refine_run(r, &err) != SS_OK)
        die(path, &err);
    ss_refine_stats s;
    ss_refine_get_stats(r, &s);
    ss_refine_destroy(&r);
    return s;
}

int main(int argc, char **argv)
{
    const char *path = argc > 1 && argv[1][0] ? argv[1] : "netlists/geophone_preamp.cir";
    int reps = argc > 2 ? atoi(argv[2]) : 3;
    if (reps < 1)
        reps = 1;
    libklu_bind();
    int cores = ss_cpu_count();
    double t1[64], tn[64];
    ss_refine_stats s1 = {0}, sn = {0};
    klu_counts total = {0};
    for (int k = 0; k < reps && k < 64; k++) {
        klu_counts before = g_count;
        s1 = run_refine(path, 1);
        if (k == 0) {
            total.factor = g_count.factor - before.factor;
            total.refactor = g_count.refactor - before.refactor;
            total.solve = g_count.solve - before.solve;
            total.z_factor = g_count.z_factor - before.z_factor;
            total.z_refactor = g_count.z_refactor - before.z_refactor;
            total.z_solve = g_count.z_solve - before.z_solve;
            total.z_tsolve = g_count.z_tsolve - before.z_tsolve;
        }
        t1[k] = s1.seconds / (double)s1.candidates;
        sn = run_refine(path, cores);
        tn[k] = sn.seconds / (double)sn.candidates;
    }
    double per1 = median(t1, reps < 64 ? reps : 64), pern = median(tn, reps < 64 ? reps : 64);

    /* the bare KLU work: the circuit's matrices at its nominal operating point and at the
     * stage's frequency */
    ss_circuit *ckt = NULL;
    ss_solver *sv = NULL;
    ss_error err = {0};
    if (ss_circuit_parse_file(path, NULL, 0, &ckt, &err) != SS_OK ||
        ss_solver_create(ckt, &sv, &err) != SS_OK || op_solve_into(sv, NULL, &err) != SS_OK)
        die(path, &err);
    double _Complex g;
    double zin, zout;
    if (stage_at_frequency(sv, 100.0, &g, &zin, &zout, &err) != SS_OK)
        die(path, &err);
    bare_mats bm;
    bare_open(&bm, sv->mna);
    long cands = s1.candidates;
    bare_candidates(&bm, &total, cands / 10 + 1, cands); /* warm up */
    double bt[64];
    for (int k = 0; k < reps && k < 64; k++) {
        double t0 = bench_now_s();
        bare_candidates(&bm, &total, cands, cands);
        bt[k] = (bench_now_s() - t0) / (double)cands;
    }
    double bare = median(bt, reps < 64 ? reps : 64);
    bare_close(&bm);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);

    printf("refine of %s: %d free values, %d corners, %d limits; %ld candidates (%ld circuits)\n",
           path, s1.n_free, s1.n_corners, s1.n_limits, s1.candidates, s1.circuits);
    printf("KLU calls per candidate: %.1f real factor/refactor, %.1f real solves, %.1f complex "
           "factor/refactor, %.1f complex solves\n",
           (double)(total.factor + total.refactor) / cands, (double)total.solve / cands,
           (double)(total.z_factor + total.z_refactor) / cands,
           (double)(total.z_solve + total.z_tsolve) / cands);
    printf("%-44s %12s %12s %14s\n", "", "us/candidate", "candidates/s", "circuits/s/thr");
    printf("%-44s %12.1f %12.0f %14.0f\n", "search, 1 thread", per1 * 1e6, 1.0 / per1,
           s1.n_corners / per1);
    char label[64];
    snprintf(label, sizeof label, "search, %d threads", cores);
    printf("%-44s %12.1f %12.0f %14.0f\n", label, pern * 1e6, 1.0 / pern,
           sn.n_corners / pern / cores);
    printf("%-44s %12.1f\n", "bare KLU, the same calls per candidate", bare * 1e6);
    printf("%-44s %12.2f\n", "ratio search (1 thread) / bare KLU", per1 / bare);
    printf("(medians of %d runs; wall-clock time of ss_refine_run, no files written)\n", reps);
    return 0;
}
