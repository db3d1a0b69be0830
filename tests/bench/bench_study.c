/* Tolerance-run benchmark: the per-trial cost of a tolerance run done as `stagesim spread`
 * does it -- one parse, one solver context, and per trial every value back to nominal
 * (ss_solver_reset_values), the toleranced values set by name (ss_solver_set_value) and the
 * figures solved (ss_figures_compute: operating point, AC sweep and stage corners, noise):
 *
 *   1. the whole study (ss_study_run, one thread, no files written) at 2 000 and at 20 000
 *      trials, each run in a fresh child process, and the ratio of their times per trial;
 *   2. the bare KLU work of one trial: exactly as many klu_refactor / klu_solve and
 *      klu_z_refactor / klu_z_solve / klu_z_tsolve calls as a trial made (counted by wrapping
 *      the KLU functions this program links, see klu_wrap), on copies of its matrices, and the
 *      ratio of the study's time per trial to it;
 *   3. for comparison, the same trials in this program's own loop;
 *   4. with a STAGESIM binary given: the command users run, `STAGESIM spread NETLIST --tol
 *      R1=5% --tol R2=5% --trials N --threads 1 -q -o DIR` (files written to a fresh folder
 *      under /tmp), at 2 000 and 20 000 trials, its CPU time per trial (the child's user +
 *      system time, parse and file writing included) against the same bare KLU work.
 *
 * CPU time, wall time and page faults per trial, medians of the repetitions (the bare work and
 * the own loop alternate, so a busy moment of the machine does not land on one side only).
 * Usage: bench_study [NETLIST] [REPEATS] [STAGESIM]   (NETLIST "" or none:
 * netlists/vibration_frontend.cir with tolerances R1 5 % and R2 5 %, as `stagesim spread
 * NETLIST --tol R1=5% --tol R2=5%`; REPEATS runs of each study size, default 3). */
#define _GNU_SOURCE /* RTLD_NEXT */
#include <dlfcn.h>
#include <stdint.h>
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

#define BLOCK_TRIALS 500 /* trials per timed repetition of the per-trial comparison */

static const char *const TOL_NAMES[] = {"r1", "r2"}; /* each +-5 %, uniform */
#define N_TOLS ((int)(sizeof TOL_NAMES / sizeof TOL_NAMES[0]))

/* ---- klu_wrap: counting the KLU calls stagesim makes --------------------------------------
 * This program defines the KLU numeric functions itself, so the library's calls land here
 * (the executable's definitions come before the shared libklu's); each counts and calls
 * libklu's own, found with dlsym(RTLD_NEXT). The bare timings call libklu's directly. */

#include "klu_count.h"

/* ---- clocks and small helpers ------------------------------------------------------------ */

static double cpu_now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Page faults of the process so far (fresh memory from the system: 10 us or so each on a
 * virtual machine, so a few per trial show in its time). */
static double faults_now(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return (double)ru.ru_minflt + (double)ru.ru_majflt;
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

/* CPU seconds, wall seconds and page faults of one measured stretch. */
typedef struct cost {
    double cpu, wall, faults;
} cost;

static cost cost_start(void) { return (cost){cpu_now_s(), bench_now_s(), faults_now()}; }

/* Since `start`, per unit of n. */
static cost cost_per(cost start, double n)
{
    return (cost){(cpu_now_s() - start.cpu) / n, (bench_now_s() - start.wall) / n,
                  (faults_now() - start.faults) / n};
}

/* Medians of each field of v[0 .. n-1] (reorders a scratch copy). */
static cost cost_median(const cost *v, int n)
{
    double *t = malloc(3 * (size_t)n * sizeof *t);
    if (!t) {
        fprintf(stderr, "bench_study: out of memory\n");
        exit(1);
    }
    for (int i = 0; i < n; i++) {
        t[i] = v[i].cpu;
        t[n + i] = v[i].wall;
        t[2 * n + i] = v[i].faults;
    }
    cost m = {median(t, n), median(t + n, n), median(t + 2 * n, n)};
    free(t);
    return m;
}

static void die(const char *what, const ss_error *err)
{
    fprintf(stderr, "bench_study: %s: %s\n", what, err->message);
    exit(1);
}

/* splitmix64 (Steele, Lea, Flood 2014): uniform in [0, 1) */
static double uniform01(uint64_t *state)
{
    uint64_t z = (*state += 0x9E3779B97F4A7C15U);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9U;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBU;
    z ^= z >> 31;
    return (double)(z >> 11) * 0x1.0p-53;
}

/* The netlist: the argument, else the example from the current folder, else from the source
 * tree this program was built from. */
static const char *netlist_path(int argc, char **argv, char *buf, size_t len)
{
    static const char rel[] = "netlists/vibration_frontend.cir";
    if (argc > 1 && argv[1][0])
        return argv[1];
    FILE *f = fopen(rel, "r");
    if (f) {
        fclose(f);
        return rel;
    }
    const char *src = __FILE__, *tail = strstr(src, "tests/bench/");
    if (!tail)
        return rel;
    snprintf(buf, len, "%.*s%s", (int)(tail - src), src, rel);
    return buf;
}

/* ---- the spread-style trial --------------------------------------------------------------- */

typedef struct trial_ctx {
    ss_solver *sv;
    const ss_limits *limits;
    double nominal[N_TOLS];
    uint64_t rng;
    long failed;
} trial_ctx;

/* One trial as the study runner does it: values back to nominal, the sampled ones set by name,
 * every figure solved. */
static void run_trials(trial_ctx *tc, long trials)
{
    for (long t = 0; t < trials; t++) {
        ss_error err = {0};
        ss_table *figs = NULL;
        ss_solver_reset_values(tc->sv);
        ss_status st = SS_OK;
        for (int k = 0; k < N_TOLS && st == SS_OK; k++) {
            double v = tc->nominal[k] * (0.95 + 0.1 * uniform01(&tc->rng));
            st = ss_solver_set_value(tc->sv, TOL_NAMES[k], v, &err);
        }
        if (st == SS_OK)
            st = ss_figures_compute(tc->sv, tc->limits, &figs, &err);
        tc->failed += st != SS_OK;
        ss_table_destroy(&figs);
    }
}

/* ---- the same trial's KLU calls, bare ----------------------------------------------------- */


/* The calls `per` counted over `trials` trials, replayed trial by trial. */
static void bare_trials(bare_mats *bm, const klu_counts *per, long trials)
{
    for (long t = 0; t < trials; t++)
        bare_replay(bm, per, t, trials);
}

/* ---- the whole study, one thread ---------------------------------------------------------- */

/* ss_study_run of `trials` trials on one thread, as `stagesim spread NETLIST --tol R1=5%
 * --tol R2=5% --threads 1` runs it (without writing the files): per trial. */
static cost run_study(const char *path, long trials)
{
    ss_study *s = NULL;
    ss_error err = {0};
    ss_table *pts = NULL;
    if (ss_study_create(path, NULL, 0, &s, &err) != SS_OK)
        die(path, &err);
    for (int k = 0; k < N_TOLS; k++) {
        char spec[64];
        snprintf(spec, sizeof spec, "%s=5%%", TOL_NAMES[k]);
        if (ss_study_add_tolerance(s, spec, &err) != SS_OK)
            die(spec, &err);
    }
    if (ss_study_set_trials(s, trials, 1, &err) != SS_OK)
        die("trials", &err);
    if (ss_study_set_threads(s, 1, &err) != SS_OK)
        die("threads", &err);
    cost c0 = cost_start();
    if (ss_study_run(s, &pts, &err) != SS_OK)
        die("study", &err);
    cost c = cost_per(c0, (double)trials);
    ss_table_destroy(&pts);
    ss_study_destroy(&s);
    return c;
}

/* run_study in a child process forked from this one before it solved anything, so every run
 * starts from the same heap: where the C library's heap top happens to lie decides whether
 * each trial's freed tables are given back to the system and faulted in again (tens of page
 * faults a trial, shown in the faults column), and an earlier run in the same process would
 * move it. */
static cost run_study_fresh(const char *path, long trials)
{
    int fd[2];
    if (pipe(fd) != 0) {
        perror("bench_study: pipe");
        exit(1);
    }
    fflush(stdout);
    pid_t pid = fork();
    if (pid < 0) {
        perror("bench_study: fork");
        exit(1);
    }
    if (pid == 0) {
        close(fd[0]);
        cost c = run_study(path, trials);
        _exit(write(fd[1], &c, sizeof c) == (ssize_t)sizeof c ? 0 : 1);
    }
    close(fd[1]);
    cost c;
    ssize_t got = read(fd[0], &c, sizeof c);
    close(fd[0]);
    int status = 0;
    waitpid(pid, &status, 0);
    if (got != (ssize_t)sizeof c || !WIFEXITED(status) || WEXITSTATUS(status) != 0) {
        fprintf(stderr, "bench_study: the study of %ld trials failed\n", trials);
        exit(1);
    }
    return c;
}

/* `STAGESIM spread` of NETLIST with the benchmark's tolerances in a child process, standard
 * output to /dev/null; its CPU time (user + system) per trial. */
static double run_cli_spread(const char *bin, const char *path, long trials)
{
    char dir[] = "/tmp/bench_study_XXXXXX";
    if (!mkdtemp(dir)) {
        perror("bench_study: mkdtemp");
        exit(1);
    }
    char n[32];
    snprintf(n, sizeof n, "%ld", trials);
    char *argv[] = {(char *)bin, "spread", (char *)path, "--tol", "R1=5%", "--tol", "R2=5%",
                    "--trials", n, "--seed", "1", "--threads", "1", "-q", "-o", dir, NULL};
    fflush(stdout);
    pid_t pid = fork();
    if (pid < 0) {
        perror("bench_study: fork");
        exit(1);
    }
    if (pid == 0) {
        if (!freopen("/dev/null", "w", stdout))
            _exit(127);
        execv(argv[0], argv);
        _exit(127);
    }
    int status = 0;
    struct rusage ru;
    wait4(pid, &status, 0, &ru);
    if (!WIFEXITED(status) || WEXITSTATUS(status) > 1) { /* 1: a limit failed, still a run */
        fprintf(stderr, "bench_study: %s spread exited with status %d\n", bin, status);
        exit(1);
    }
    const char *files[] = {"study.csv", "study_summary.csv", "run_manifest.csv"};
    char f[sizeof dir + 32];
    for (size_t k = 0; k < sizeof files / sizeof files[0]; k++) {
        snprintf(f, sizeof f, "%s/%s", dir, files[k]);
        remove(f);
    }
    rmdir(dir);
    double cpu = (double)ru.ru_utime.tv_sec + 1e-6 * (double)ru.ru_utime.tv_usec +
                 (double)ru.ru_stime.tv_sec + 1e-6 * (double)ru.ru_stime.tv_usec;
    return cpu / (double)trials;
}

static void print_cost(const char *what, cost c)
{
    printf("%-48s %10.1f %10.1f %8.1f\n", what, c.cpu * 1e6, c.wall * 1e6, c.faults);
}

int main(int argc, char **argv)
{
    libklu_bind();
    char buf[4096];
    const char *path = netlist_path(argc, argv, buf, sizeof buf);
    int reps = argc > 2 ? atoi(argv[2]) : 3;
    if (reps < 1)
        reps = 1;

    /* 1. the whole study at two sizes, alternately, each run in a fresh process */
    cost *s2 = malloc((size_t)reps * sizeof *s2), *s20 = malloc((size_t)reps * sizeof *s20);
    if (!s2 || !s20)
        return 1;
    for (int r = 0; r < reps; r++) {
        s2[r] = run_study_fresh(path, 2000);
        s20[r] = run_study_fresh(path, 20000);
    }
    cost m2 = cost_median(s2, reps), m20 = cost_median(s20, reps);

    /* 2. one trial's KLU calls, counted over a block of trials on one context */
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    ss_limits *limits = NULL;
    trial_ctx tc = {0};
    tc.rng = 1;
    if (ss_circuit_parse_file(path, NULL, 0, &ckt, &err) != SS_OK ||
        ss_solver_create(ckt, &tc.sv, &err) != SS_OK || ss_limits_create(&limits, &err) != SS_OK ||
        ss_limits_add_circuit(limits, ckt, &err) != SS_OK)
        die(path, &err);
    tc.limits = limits;
    for (int k = 0; k < N_TOLS; k++)
        if (ss_circuit_get_value(ckt, TOL_NAMES[k], &tc.nominal[k], &err) != SS_OK)
            die(TOL_NAMES[k], &err);
    run_trials(&tc, 100); /* warm up */
    memset(&g_count, 0, sizeof g_count);
    run_trials(&tc, BLOCK_TRIALS);
    klu_counts per = g_count;
    if (per.factor + per.refactor == 0 || per.z_factor + per.z_refactor == 0) {
        fprintf(stderr, "bench_study: no KLU call was counted: the wrappers are not in use\n");
        return 1;
    }

    /* 3. those calls bare, alternating with the same trials on this context */
    bare_mats bm;
    bare_open(&bm, tc.sv->mna);
    bare_trials(&bm, &per, BLOCK_TRIALS / 10); /* warm up */
    int breps = 2 * reps + 1;
    cost *own = malloc((size_t)breps * sizeof *own), *bare = malloc((size_t)breps * sizeof *bare);
    if (!own || !bare)
        return 1;
    for (int r = 0; r < breps; r++) {
        cost c0 = cost_start();
        bare_trials(&bm, &per, BLOCK_TRIALS);
        bare[r] = cost_per(c0, BLOCK_TRIALS);
        c0 = cost_start();
        run_trials(&tc, BLOCK_TRIALS);
        own[r] = cost_per(c0, BLOCK_TRIALS);
    }
    cost mb = cost_median(bare, breps), mo = cost_median(own, breps);
    bare_close(&bm);
    int unknowns = tc.sv->n_unknowns;
    long failed = tc.failed;
    ss_solver_destroy(&tc.sv);
    ss_limits_destroy(&limits);
    ss_circuit_destroy(&ckt);

    double bt = (double)BLOCK_TRIALS;
    printf("bench_study: %s, %d unknowns, tolerances r1 5%%, r2 5%%, one thread; medians of "
           "%d runs, %d x %d bare trials\n",
           path, unknowns, reps, breps, BLOCK_TRIALS);
    printf("KLU calls per trial: real %.1f factorizations (%.1f fresh) + %.1f solves; complex "
           "%.1f factorizations (%.1f fresh) + %.1f solves + %.1f transposed solves\n",
           (double)(per.factor + per.refactor) / bt, (double)per.factor / bt,
           (double)per.solve / bt, (double)(per.z_factor + per.z_refactor) / bt,
           (double)per.z_factor / bt, (double)per.z_solve / bt, (double)per.z_tsolve / bt);
    printf("%-48s %10s %10s %8s\n", "per trial", "CPU us", "wall us", "faults");
    print_cost("tolerance run (ss_study_run), 2000 trials", m2);
    print_cost("tolerance run (ss_study_run), 20000 trials", m20);
    print_cost("bare KLU, the same calls (factor as refactor)", mb);
    print_cost("the same trials in this program's own loop", mo);
    printf("%-48s %10.2f %10.2f\n", "ratio tolerance run (2000) / bare KLU", m2.cpu / mb.cpu,
           m2.wall / mb.wall);
    printf("%-48s %10.2f %10.2f\n", "ratio 20000 / 2000 trials per trial (1 = linear)",
           m20.cpu / m2.cpu, m20.wall / m2.wall);
    if (failed)
        printf("(%ld trials did not solve)\n", failed);

    /* 4. the command itself, each size alternately, medians */
    if (argc > 3 && argv[3][0]) {
        double *c2 = malloc((size_t)reps * sizeof *c2), *c20 = malloc((size_t)reps * sizeof *c20);
        if (!c2 || !c20)
            return 1;
        for (int r = 0; r < reps; r++) {
            c2[r] = run_cli_spread(argv[3], path, 2000);
            c20[r] = run_cli_spread(argv[3], path, 20000);
        }
        double cm2 = median(c2, reps), cm20 = median(c20, reps);
        printf("%-48s %10s\n", "the command, per trial", "CPU us");
        printf("%-48s %10.1f\n", "stagesim spread --threads 1, 2000 trials", cm2 * 1e6);
        printf("%-48s %10.1f\n", "stagesim spread --threads 1, 20000 trials", cm20 * 1e6);
        printf("%-48s %10.2f\n", "ratio command (20000) / bare KLU", cm20 / mb.cpu);
        printf("%-48s %10.2f\n", "ratio command 20000 / 2000 per trial", cm20 / cm2);
        free(c2);
        free(c20);
    }
    free(own);
    free(bare);
    free(s2);
    free(s20);
    return 0;
}
