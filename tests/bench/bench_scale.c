/* Scale benchmark: generated circuits from 10 to 1,000,000 nodes (RC ladders, chains of BJT
 * stages, arrays of amplifier channels on one supply). For each size, measured in the same run
 * in a fresh child process: netlist parse time and rate, operating point time (from the solver
 * context's creation) and Newton iterations, AC time per frequency point (a 21-point sweep: its
 * first point builds the AC cache and factors afresh, the others refactor), peak memory of
 * stagesim's own work, and the bare KLU work on the very same matrices (analyze, factor,
 * refactor, solve; real and complex; for the sweep a full complex factorization then
 * refactors) -- the physical limit.
 * Usage: bench_scale [MAX_NODES] [KIND...]   KIND: ladder chain array (default all).
 * Prints a markdown table. */
#define _POSIX_C_SOURCE 200809L
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <suitesparse/klu.h>

#include "analysis/analysis.h"
#include "stagesim/stagesim.h"

#include "bench_util.h"

typedef struct gen {
    char *t;
    size_t len, cap;
} gen;

static void put(gen *g, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void put(gen *g, const char *fmt, ...)
{
    va_list ap;
    for (;;) {
        va_start(ap, fmt);
        int n = vsnprintf(g->t + g->len, g->cap - g->len, fmt, ap);
        va_end(ap);
        if ((size_t)n < g->cap - g->len) {
            g->len += (size_t)n;
            return;
        }
        g->cap = g->cap * 2 + 4096;
        g->t = realloc(g->t, g->cap);
    }
}

/* RC ladder: n sections, n + 1 nodes. */
static void gen_ladder(gen *g, int nodes)
{
    char *t = bench_rc_ladder("rc ladder", "vin n0 0 dc 1 ac 1", nodes - 1, "100",
                              ".ac dec 10 1k 100k\n", NULL);
    put(g, "%s", t);
    free(t);
}

/* A chain of AC-coupled common-emitter stages with unbypassed emitter resistors (gain about
 * -1 each, so the signal neither dies nor overflows along the chain): 4 nodes per stage. */
static void gen_chain(gen *g, int nodes)
{
    int stages = nodes / 4 > 0 ? nodes / 4 : 1;
    put(g, "bjt chain\n.model qc npn is=1e-15 bf=150 vaf=80 cje=5p cjc=2p tf=0.3n\n"
           "vcc vcc 0 12\nvin i0 0 dc 0 ac 1m\n");
    for (int s = 0; s < stages; s++) {
        put(g, "c%da i%d b%d 1u\nr%da vcc b%d 82k\nr%db b%d 0 15k\n", s, s, s, s, s, s, s);
        put(g, "rc%d vcc c%d 4.7k\nre%d e%d 0 4.7k\n", s, s, s, s);
        put(g, "q%d c%d b%d e%d qc\nc%db c%d i%d 1u\nrl%d i%d 0 47k\n", s, s, s, s, s, s, s + 1,
            s, s + 1);
    }
    put(g, ".ac dec 10 1k 100k\n");
}

/* An array of identical two-transistor channels sharing a supply with source resistance. */
static void gen_array(gen *g, int nodes)
{
    int ch = nodes / 8 > 0 ? nodes / 8 : 1;
    put(g, "channel array\n.model qa npn is=8e-15 bf=200 vaf=80 rb=30 cje=10p cjc=4p\n"
           "vsup sup 0 12\nrsup sup vcc 0.5\nvin src 0 dc 0 ac 1\n");
    for (int c = 0; c < ch; c++) {
        put(g, "rs%d src in%d 600\nc1_%d in%d b%d 4.7u\n", c, c, c, c, c);
        put(g, "r1_%d vcc b%d 68k\nr2_%d b%d 0 12k\n", c, c, c, c);
        put(g, "rc%d vcc c%d 6.8k\nre%d e%d 0 1.5k\n", c, c, c, c);
        put(g, "q1_%d c%d b%d e%d qa\nq2_%d vcc c%d o%d qa\n", c, c, c, c, c, c, c);
        put(g, "re2_%d o%d 0 3.3k\nc2_%d o%d out%d 10u\nrl%d out%d 0 10k\n", c, c, c, c, c, c, c);
    }
    put(g, ".ac dec 10 1k 100k\n");
}

/* Bare KLU on the circuit's own real and complex matrices. */
static void bare_klu(ss_solver *sv, double *t_an, double *t_fac, double *t_ref, double *t_sol,
                     double *t_zfac, double *t_zref, double *t_zsol)
{
    mna *m = sv->mna;
    int n = mna_n(m);
    int *Ap = (int *)mna_colptr(m), *Ai = (int *)mna_rowidx(m);
    klu_common c;
    klu_defaults(&c);
    double t0 = bench_now_s();
    klu_symbolic *sym = klu_analyze(n, Ap, Ai, &c);
    *t_an = bench_now_s() - t0;
    double *Ax = mna_values(m);
    t0 = bench_now_s();
    klu_numeric *num = klu_factor(Ap, Ai, Ax, sym, &c);
    *t_fac = bench_now_s() - t0;
    double *b = malloc((size_t)n * 2 * sizeof *b);
    int reps = n > 100000 ? 3 : n > 10000 ? 10 : n > 1000 ? 100 : 2000;
    t0 = bench_now_s();
    for (int r = 0; r < reps; r++)
        klu_refactor(Ap, Ai, Ax, sym, num, &c);
    *t_ref = (bench_now_s() - t0) / reps;
    t0 = bench_now_s();
    for (int r = 0; r < reps; r++) {
        for (int i = 0; i < n; i++)
            b[i] = 1.0;
        klu_solve(sym, num, n, 1, b, &c);
    }
    *t_sol = (bench_now_s() - t0) / reps;
    klu_free_numeric(&num, &c);
    double *Az = (double *)mna_zvalues(m);
    t0 = bench_now_s();
    num = klu_z_factor(Ap, Ai, Az, sym, &c);
    *t_zfac = bench_now_s() - t0;
    t0 = bench_now_s();
    for (int r = 0; r < reps; r++)
        klu_z_refactor(Ap, Ai, Az, sym, num, &c);
    *t_zref = (bench_now_s() - t0) / reps;
    t0 = bench_now_s();
    for (int r = 0; r < reps; r++) {
        for (int i = 0; i < 2 * n; i++)
            b[i] = 1.0;
        klu_z_solve(sym, num, n, 1, b, &c);
    }
    *t_zsol = (bench_now_s() - t0) / reps;
    klu_free_numeric(&num, &c);
    klu_free_symbolic(&sym, &c);
    free(b);
}

static double peak_mib(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return (double)ru.ru_maxrss / 1024.0;
}

static int bench_one(const char *kind, int nodes)
{
    gen g = {malloc(1 << 16), 0, 1 << 16};
    if (strcmp(kind, "ladder") == 0)
        gen_ladder(&g, nodes);
    else if (strcmp(kind, "chain") == 0)
        gen_chain(&g, nodes);
    else
        gen_array(&g, nodes);
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    double t0 = bench_now_s();
    if (ss_circuit_parse_text(g.t, g.len, kind, NULL, 0, &ckt, &err) != SS_OK) {
        fprintf(stderr, "%s: %s\n", kind, err.message);
        return 1;
    }
    double t_parse = bench_now_s() - t0;
    double mib_parse = peak_mib();
    size_t text_len = g.len;
    free(g.t); /* as the command line does: the text is gone once parsed */
    g.t = NULL;
    /* the operating point's time counts from the solver context's creation (its copies of the
     * elements and models), as a run makes one after parsing */
    ss_op_stats stats;
    ss_solver *sv = NULL;
    t0 = bench_now_s();
    if (ss_solver_create(ckt, &sv, &err) != SS_OK) {
        fprintf(stderr, "%s %d: %s\n", kind, nodes, err.message);
        return 1;
    }
    double t_ctx = bench_now_s() - t0;
    if (solver_prepare(sv, &err) != SS_OK) {
        fprintf(stderr, "%s %d: %s\n", kind, nodes, err.message);
        return 1;
    }
    double t_prep = bench_now_s() - t0 - t_ctx;
    double mib_prep = peak_mib();
    if (ss_op_solve(sv, NULL, &stats, &err) != SS_OK) {
        fprintf(stderr, "%s %d: %s\n", kind, nodes, err.message);
        return 1;
    }
    double t_op = bench_now_s() - t0;
    double mib_op = peak_mib();
    /* one Newton iteration's device work, as newton_solve does it (values cleared, every
     * element's load_dc at the answer): the part of the operating point that is neither KLU
     * nor bookkeeping */
    double t_load = 0.0;
    {
        mna *m = sv->mna;
        double *G = mna_values(m), *rhs = sv->work_rhs;
        int reps = 3;
        t0 = bench_now_s();
        for (int r = 0; r < reps; r++) {
            memset(G, 0, (size_t)mna_nnz(m) * sizeof *G);
            memset(rhs, 0, (size_t)sv->n_unknowns * sizeof *rhs);
            dev_load_ctx lc = {G, rhs, sv->x_op, ckt->opt.gmin, 1.0, analysis_vt(sv),
                               LOAD_FROM_X, 0, sv->elem};
            for (int i = 0; i < sv->n_elem; i++)
                sv->elem[i].ops->load_dc(&sv->elem[i], &lc);
        }
        t_load = (bench_now_s() - t0) / reps;
    }
    if (getenv("BENCH_PHASES"))
        fprintf(stderr, "%s %d: context %.4f s, prepare %.4f s of op %.4f s\n", kind, nodes,
                t_ctx, t_prep, t_op);
    const mna_counters *cnt = mna_get_counters(sv->mna);
    long op_solves = cnt->real_solves;
    /* AC: the per-point cost without writing every node (stage-style use); the first point
     * (the cache of A0 and A1, a full complex factorization) apart from the others */
    int pts = 21;
    double t_first = 0.0;
    t0 = bench_now_s();
    for (int k = 0; k < pts; k++) {
        if (ac_solve_point(sv, 2.0 * SS_PI * 1e3 * pow(100.0, (double)k / (pts - 1)), NULL, 0, 0,
                           &err) != SS_OK) {
            fprintf(stderr, "%s\n", err.message);
            return 1;
        }
        if (k == 0)
            t_first = bench_now_s() - t0;
    }
    double t_ac = (bench_now_s() - t0) / pts;
    double t_ac_next = (t_ac * pts - t_first) / (pts - 1);
    if (getenv("BENCH_PHASES"))
        fprintf(stderr,
                "peak MiB after parse %.0f (netlist text %.0f), prepare %.0f, op %.0f, AC %.0f\n",
                mib_parse, text_len / 1048576.0, mib_prep, mib_op, peak_mib());
    double peak_kib = peak_mib() * 1024.0; /* stagesim's own work, before the bare KLU's */
    double an, fac, ref, sol, zfac, zref, zsol;
    bare_klu(sv, &an, &fac, &ref, &sol, &zfac, &zref, &zsol);
    /* the same sweep bare: a full complex factorization at the first point, refactors after */
    double ac_bare = (zfac + zsol + (pts - 1) * (zref + zsol)) / pts;
    if (getenv("BENCH_PHASES"))
        fprintf(stderr,
                "bare: analyze %.4f factor %.4f refactor %.4f solve %.4f zfactor %.4f zref %.4f "
                "zsol %.4f; op solves %ld; AC first point %.4f (bare %.4f), then %.4f per point "
                "(bare %.4f)\n"
                "device loading %.4f per Newton iteration, %.4f in all (%d iterations)\n",
                an, fac, ref, sol, zfac, zref, zsol, op_solves, t_first, zfac + zsol, t_ac_next,
                zref + zsol, t_load, t_load * stats.newton_iterations, stats.newton_iterations);
    /* the op's bare work: its refactor + solve count at the measured per-call cost (the
     * first is a full factorization) plus one analyze */
    double op_bare = an + fac + (double)(op_solves - 1) * ref + (double)op_solves * sol;
    printf("| %-6s | %9d | %8d | %9.3f | %7.1f | %9.4f | %3d | %9.4f | %5.2f | %9.3f | %9.3f | "
           "%5.2f | %8.0f | %6.0f |\n",
           kind, sv->n_unknowns, ckt->n_elem, t_parse * 1e3, text_len / t_parse / 1e6, t_op,
           stats.newton_iterations, op_bare, t_op / op_bare, t_ac * 1e3, ac_bare * 1e3,
           t_ac / ac_bare, peak_kib / 1024.0, peak_kib * 1024.0 / sv->n_nodes);
    fflush(stdout);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    free(g.t);
    return 0;
}

int main(int argc, char **argv)
{
    long max_nodes = argc > 1 ? atol(argv[1]) : 1000000;
    const char *kinds[3] = {"ladder", "chain", "array"};
    int n_kinds = 3;
    if (argc > 2) {
        n_kinds = 0;
        for (int i = 2; i < argc && n_kinds < 3; i++)
            kinds[n_kinds++] = argv[i];
    }
    printf("| kind   | unknowns  | elements | parse ms  | MB/s    | op s      | it  | op bare s "
           "| ratio | AC ms/pt  | bare ms   | ratio | peak MiB | B/node |\n");
    printf("|--------|-----------|----------|-----------|---------|-----------|-----|-----------"
           "|-------|-----------|-----------|-------|----------|--------|\n");
    fflush(stdout);
    for (int k = 0; k < n_kinds; k++)
        for (long nodes = 10; nodes <= max_nodes; nodes *= 10) {
            pid_t pid = fork(); /* a fresh process per size: peak memory is this size's own */
            if (pid == 0)
                _exit(bench_one(kinds[k], (int)nodes));
            int status;
            waitpid(pid, &status, 0);
        }
    return 0;
}
