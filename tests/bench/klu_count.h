/* Counting the KLU calls stagesim makes, for the benchmarks that compare against the bare
 * KLU work: the including program defines the KLU numeric functions itself, so the library's
 * calls land here (the executable's definitions come before the shared libklu's); each counts
 * in g_count and calls libklu's own, found with dlsym(RTLD_NEXT) once libklu_bind() has run.
 * Include it in one file of a program only (it defines the functions). */
#ifndef SS_BENCH_KLU_COUNT_H
#define SS_BENCH_KLU_COUNT_H

#include <dlfcn.h>
#include <stdio.h>
#include <stdlib.h>

#include <suitesparse/klu.h>

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

#endif
