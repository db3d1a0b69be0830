/* Counting the KLU calls stagesim makes, for the benchmarks that compare against the bare
 * KLU work: the including program defines the KLU numeric functions itself, so the library's
 * calls land here (the executable's definitions come before the shared libklu's); each counts
 * in g_count and calls libklu's own, found with dlsym(RTLD_NEXT) once libklu_bind() has run.
 * Include it in one file of a program only (it defines the functions). Also the bare KLU
 * work itself: a context's matrices copied out and factored and solved directly. */
#ifndef SS_BENCH_KLU_COUNT_H
#define SS_BENCH_KLU_COUNT_H

#include <dlfcn.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <suitesparse/klu.h>

#include "mna/mna.h"

typedef klu_numeric *(*factor_fn)(int *, int *, double *, klu_symbolic *, klu_common *);
typedef int (*refactor_fn)(int *, int *, double *, klu_symbolic *, klu_numeric *,
                           klu_common *);
typedef int (*solve_fn)(klu_symbolic *, klu_numeric *, int, int, double *, klu_common *);
typedef int (*tsolve_fn)(klu_symbolic *, klu_numeric *, int, int, double *, int,
                         klu_common *);

static struct {
    factor_fn factor, z_factor;
    refactor_fn refactor, z_refactor;
    solve_fn solve, z_solve;
    tsolve_fn z_tsolve;
} libklu;

typedef struct klu_counts {
    long factor, refactor, solve;                 /* real */
    long z_factor, z_refactor, z_solve, z_tsolve; /* complex */
} klu_counts;
static klu_counts g_count;

static void *libklu_sym(const char *name)
{
    void *f = dlsym(RTLD_NEXT, name);
    if (!f) {
        fprintf(stderr, "benchmark: %s not found in the KLU library\n", name);
        exit(1);
    }
    return f;
}

static void libklu_bind(void)
{
    libklu.factor = (factor_fn)libklu_sym("klu_factor");
    libklu.z_factor = (factor_fn)libklu_sym("klu_z_factor");
    libklu.refactor = (refactor_fn)libklu_sym("klu_refactor");
    libklu.z_refactor = (refactor_fn)libklu_sym("klu_z_refactor");
    libklu.solve = (solve_fn)libklu_sym("klu_solve");
    libklu.z_solve = (solve_fn)libklu_sym("klu_z_solve");
    libklu.z_tsolve = (tsolve_fn)libklu_sym("klu_z_tsolve");
}

klu_numeric *klu_factor(int *Ap, int *Ai, double *Ax, klu_symbolic *sym, klu_common *c)
{
    g_count.factor++;
    return libklu.factor(Ap, Ai, Ax, sym, c);
}

klu_numeric *klu_z_factor(int *Ap, int *Ai, double *Ax, klu_symbolic *sym, klu_common *c)
{
    g_count.z_factor++;
    return libklu.z_factor(Ap, Ai, Ax, sym, c);
}

int klu_refactor(int *Ap, int *Ai, double *Ax, klu_symbolic *sym, klu_numeric *num,
                 klu_common *c)
{
    g_count.refactor++;
    return libklu.refactor(Ap, Ai, Ax, sym, num, c);
}

int klu_z_refactor(int *Ap, int *Ai, double *Ax, klu_symbolic *sym, klu_numeric *num,
                   klu_common *c)
{
    g_count.z_refactor++;
    return libklu.z_refactor(Ap, Ai, Ax, sym, num, c);
}

int klu_solve(klu_symbolic *sym, klu_numeric *num, int ldim, int nrhs, double *B, klu_common *c)
{
    g_count.solve++;
    return libklu.solve(sym, num, ldim, nrhs, B, c);
}

int klu_z_solve(klu_symbolic *sym, klu_numeric *num, int ldim, int nrhs, double *B,
                klu_common *c)
{
    g_count.z_solve++;
    return libklu.z_solve(sym, num, ldim, nrhs, B, c);
}

int klu_z_tsolve(klu_symbolic *sym, klu_numeric *num, int ldim, int nrhs, double *B,
                 int conj_solve, klu_common *c)
{
    g_count.z_tsolve++;
    return libklu.z_tsolve(sym, num, ldim, nrhs, B, conj_solve, c);
}

/* ---- the bare KLU work: the matrices of a stagesim context, factored and solved directly -- */

typedef struct bare_mats {
    int n;
    int *Ap, *Ai;
    double *Ax, *Az; /* the real and complex values as the last solve left them */
    double *b, *b0;  /* right-hand side and its start (2 n: room for complex) */
    klu_common c;
    klu_symbolic *sym;
    klu_numeric *num, *znum;
} bare_mats;

static double *dup_doubles(const double *src, size_t n)
{
    double *d = malloc(n * sizeof *d);
    if (!d) {
        fprintf(stderr, "benchmark: out of memory\n");
        exit(1);
    }
    memcpy(d, src, n * sizeof *d);
    return d;
}

static void bare_open(bare_mats *bm, mna *m)
{
    int n = mna_n(m), nnz = mna_nnz(m);
    bm->n = n;
    bm->Ap = malloc((size_t)(n + 1) * sizeof *bm->Ap);
    bm->Ai = malloc((size_t)nnz * sizeof *bm->Ai);
    if (!bm->Ap || !bm->Ai) {
        fprintf(stderr, "benchmark: out of memory\n");
        exit(1);
    }
    memcpy(bm->Ap, mna_colptr(m), (size_t)(n + 1) * sizeof *bm->Ap);
    memcpy(bm->Ai, mna_rowidx(m), (size_t)nnz * sizeof *bm->Ai);
    bm->Ax = dup_doubles(mna_values(m), (size_t)nnz);
    bm->Az = dup_doubles((const double *)mna_zvalues(m), 2 * (size_t)nnz);
    bm->b = malloc(2 * (size_t)n * sizeof *bm->b);
    bm->b0 = malloc(2 * (size_t)n * sizeof *bm->b0);
    if (!bm->b || !bm->b0) {
        fprintf(stderr, "benchmark: out of memory\n");
        exit(1);
    }
    for (int i = 0; i < n; i++) {
        bm->b0[2 * i] = 1.0;
        bm->b0[2 * i + 1] = 0.0;
    }
    klu_defaults(&bm->c);
    bm->sym = klu_analyze(n, bm->Ap, bm->Ai, &bm->c);
    bm->num = bm->sym ? libklu.factor(bm->Ap, bm->Ai, bm->Ax, bm->sym, &bm->c) : NULL;
    bm->znum = bm->sym ? libklu.z_factor(bm->Ap, bm->Ai, bm->Az, bm->sym, &bm->c) : NULL;
    if (!bm->num || !bm->znum) {
        fprintf(stderr, "benchmark: bare KLU could not factor the matrices\n");
        exit(1);
    }
}

static void bare_close(bare_mats *bm)
{
    klu_free_numeric(&bm->num, &bm->c);
    klu_z_free_numeric(&bm->znum, &bm->c);
    klu_free_symbolic(&bm->sym, &bm->c);
    free(bm->Ap);
    free(bm->Ai);
    free(bm->Ax);
    free(bm->Az);
    free(bm->b);
    free(bm->b0);
}

/* Repetition t's share of total calls over n repetitions (trials, candidates): the shares add
 * up to total exactly. */
static long share(long total, long t, long n)
{
    return total * (t + 1) / n - total * t / n;
}

/* Repetition t of n_rep of the calls `per` counted over n_rep repetitions, replayed bare:
 * every factorization (fresh or not) as a refactor, every solve on a fresh right-hand side. */
static void bare_replay(bare_mats *bm, const klu_counts *per, long t, long n_rep)
{
    int n = bm->n;
    size_t rb = (size_t)n * sizeof *bm->b, zb = 2 * rb;
    long ref = share(per->factor + per->refactor, t, n_rep);
    long sol = share(per->solve, t, n_rep);
    long zref = share(per->z_factor + per->z_refactor, t, n_rep);
    long zsol = share(per->z_solve, t, n_rep);
    long ztsol = share(per->z_tsolve, t, n_rep);
    for (long k = 0; k < ref; k++)
        libklu.refactor(bm->Ap, bm->Ai, bm->Ax, bm->sym, bm->num, &bm->c);
    for (long k = 0; k < sol; k++) {
        memcpy(bm->b, bm->b0, rb);
        libklu.solve(bm->sym, bm->num, n, 1, bm->b, &bm->c);
    }
    for (long k = 0; k < zref; k++)
        libklu.z_refactor(bm->Ap, bm->Ai, bm->Az, bm->sym, bm->znum, &bm->c);
    for (long k = 0; k < zsol; k++) {
        memcpy(bm->b, bm->b0, zb);
        libklu.z_solve(bm->sym, bm->znum, n, 1, bm->b, &bm->c);
    }
    for (long k = 0; k < ztsol; k++) {
        memcpy(bm->b, bm->b0, zb);
        libklu.z_tsolve(bm->sym, bm->znum, n, 1, bm->b, 0, &bm->c);
    }
}

#endif
