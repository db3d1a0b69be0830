/* End-to-end benchmark: `stagesim run` of a generated RC ladder (default 100,000 nodes) with a
 * 21-point AC sweep, writing every node, against the bare KLU work of the same sweep -- measured
 * in one run on the same machine.
 *
 *   1. the real command line: the stagesim binary run as a child process (wall and CPU time),
 *      once writing every node and once with --nodes naming one;
 *   2. the same steps in this process, one by one: read + parse, solver context + prepare,
 *      operating point (Newton, verification), op.csv written, the AC sweep written to ac.csv
 *      as it runs; for comparison the sweep alone and the sweep into a table;
 *   3. bare KLU on the very matrices of that run: klu_analyze, then the operating point's
 *      factor / refactor + solve count, then klu_z_factor + solve for the first frequency and
 *      klu_z_refactor + solve for the other twenty -- the work no design on KLU can skip.
 *
 * Usage: bench_run STAGESIM_BINARY [NODES] [WORK_DIR]   (default 100000 nodes, /tmp)
 * Prints a markdown table. */
#define _DEFAULT_SOURCE /* wait4 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/time.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <suitesparse/klu.h>

#include "analysis/analysis.h"
#include "stagesim/stagesim.h"

#include "bench_util.h"

#define AC_POINTS 21

static int write_ladder(const char *path, int nodes)
{
    FILE *f = fopen(path, "w");
    if (!f)
        return -1;
    char title[96];
    snprintf(title, sizeof title, "rc ladder of %d nodes for the end-to-end benchmark", nodes);
    size_t len = 0;
    /* 1k .. 100k, 10 per decade: 21 points */
    char *text = bench_rc_ladder(title, "vin n0 0 dc 1 ac 1", nodes - 1, "100",
                                 ".ac dec 10 1k 100k\n.end\n", &len);
    int bad = !text || fwrite(text, 1, len, f) != len;
    free(text);
    return fclose(f) != 0 || bad ? -1 : 0;
}

/* Runs the binary; returns wall seconds and sets the child's user + system CPU seconds. */
static double run_child(char *const argv[], double *cpu_s)
{
    double t0 = bench_now_s();
    pid_t pid = fork();
    if (pid == 0) {
        if (!freopen("/dev/null", "w", stdout))
            _exit(127);
        execv(argv[0], argv);
        _exit(127);
    }
    int status = 0;
    struct rusage ru;
    wait4(pid, &status, 0, &ru);
    double wall = bench_now_s() - t0;
    *cpu_s = (double)ru.ru_utime.tv_sec + 1e-6 * (double)ru.ru_utime.tv_usec +
             (double)ru.ru_stime.tv_sec + 1e-6 * (double)ru.ru_stime.tv_usec;
    if (!WIFEXITED(status) || WEXITSTATUS(status) != 0) {
        fprintf(stderr, "bench_run: %s exited with status %d\n", argv[0], status);
        exit(1);
    }
    return wall;
}

static void die(const ss_error *err)
{
    fprintf(stderr, "bench_run: %s\n", err->message);
    exit(1);
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: bench_run STAGESIM_BINARY [NODES] [WORK_DIR]\n");
        return 2;
    }
    const char *bin = argv[1];
    int nodes = argc > 2 ? atoi(argv[2]) : 100000;
    const char *dir = argc > 3 ? argv[3] : "/tmp";
    char net[4096], out[4096], out1[4096], last[64];
    snprintf(net, sizeof net, "%s/bench_run_ladder.cir", dir);
    snprintf(out, sizeof out, "%s/bench_run_out", dir);
    snprintf(out1, sizeof out1, "%s/bench_run_out1", dir);
    snprintf(last, sizeof last, "n%d", nodes - 1);
    if (nodes < 2 || write_ladder(net, nodes) != 0) {
        fprintf(stderr, "bench_run: cannot write %s\n", net);
        return 1;
    }

    /* 1. the command line, twice each (the first warms the page cache), the second counted */
    char *all_argv[] = {(char *)bin, "run", net, "-o", out, "--quiet", NULL};
    char *one_argv[] = {(char *)bin, "run", net, "-o", out1, "--quiet", "--nodes", last, NULL};
    double cpu_all, cpu_one;
    run_child(all_argv, &cpu_all);
    double wall_all = run_child(all_argv, &cpu_all);
    run_child(one_argv, &cpu_one);
    double wall_one = run_child(one_argv, &cpu_one);

    /* 2. the same steps in process */
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    ss_solver *sv = NULL;
    double t0 = bench_now_s();
    if (ss_circuit_parse_file(net, NULL, 0, &ckt, &err) != SS_OK)
        die(&err);
    double t_parse = bench_now_s() - t0;
    t0 = bench_now_s();
    if (ss_solver_create(ckt, &sv, &err) != SS_OK || solver_prepare(sv, &err) != SS_OK)
        die(&err);
    double t_prep = bench_now_s() - t0;
    ss_table *op = NULL, *ac = NULL;
    t0 = bench_now_s();
    if (ss_op_solve(sv, &op, NULL, &err) != SS_OK)
        die(&err);
    double t_op = bench_now_s() - t0;
    long op_solves = mna_get_counters(sv->mna)->real_solves;
    char path[4200];
    t0 = bench_now_s();
    snprintf(path, sizeof path, "%s/op.csv", out);
    if (ss_table_write_csv(op, path, &err) != SS_OK)
        die(&err);
    double t_wop = bench_now_s() - t0;
    /* the sweep alone, no output (how the stage figures use it) */
    t0 = bench_now_s();
    for (int k = 0; k < AC_POINTS; k++)
        if (ac_solve_point(sv, 2.0 * SS_PI * 1e3 * pow(10.0, k / 10.0), NULL, 0, 0, &err) !=
            SS_OK)
            die(&err);
    double t_ac_bare_loop = bench_now_s() - t0;
    solver_lost_ac(sv); /* the written sweep starts from scratch, as in run */
    mna_reset_numeric(sv->mna);
    t0 = bench_now_s();
    snprintf(path, sizeof path, "%s/ac.csv", out);
    if (ss_ac_sweep_write(sv, path, &err) != SS_OK)
        die(&err);
    double t_wac = bench_now_s() - t0;
    /* the table form (library users who keep the numbers) */
    t0 = bench_now_s();
    if (ss_ac_sweep_run(sv, &ac, &err) != SS_OK)
        die(&err);
    double t_ac_table = bench_now_s() - t0;
    long cells = (long)ss_table_rows(ac) * ss_table_cols(ac);

    /* 3. bare KLU on the same matrices: the real one as the operating point left it, the
     * complex one as the last frequency left it */
    mna *m = sv->mna;
    int n = mna_n(m);
    int *Ap = (int *)mna_colptr(m), *Ai = (int *)mna_rowidx(m);
    double *Ax = mna_values(m), *Az = (double *)mna_zvalues(m);
    double *b = malloc((size_t)n * 2 * sizeof *b);
    klu_common c;
    klu_defaults(&c);
    t0 = bench_now_s();
    klu_symbolic *sym = klu_analyze(n, Ap, Ai, &c);
    double b_an = bench_now_s() - t0;
    t0 = bench_now_s();
    klu_numeric *num = klu_factor(Ap, Ai, Ax, sym, &c);
    for (int i = 0; i < n; i++)
        b[i] = 1.0;
    klu_solve(sym, num, n, 1, b, &c);
    for (long k = 1; k < op_solves; k++) {
        klu_refactor(Ap, Ai, Ax, sym, num, &c);
        for (int i = 0; i < n; i++)
            b[i] = 1.0;
        klu_solve(sym, num, n, 1, b, &c);
    }
    double b_op = bench_now_s() - t0;
    klu_free_numeric(&num, &c);
    t0 = bench_now_s();
    num = klu_z_factor(Ap, Ai, Az, sym, &c);
    for (int k = 0; k < AC_POINTS; k++) {
        if (k > 0)
            klu_z_refactor(Ap, Ai, Az, sym, num, &c);
        for (int i = 0; i < 2 * n; i++)
            b[i] = 1.0;
        klu_z_solve(sym, num, n, 1, b, &c);
    }
    double b_ac = bench_now_s() - t0;
    klu_free_numeric(&num, &c);
    klu_free_symbolic(&sym, &c);
    free(b);
    double bare = b_an + b_op + b_ac;
    double inproc = t_parse + t_prep + t_op + t_wop + t_wac;

    printf("| %d-node RC ladder, %d AC points (%ld values in ac.csv) | seconds | / bare KLU |\n",
           nodes, AC_POINTS, cells);
    printf("| --- | ---: | ---: |\n");
    printf("| bare KLU: analyze %.4f + operating point %.4f (%ld solves) + AC %.4f | %.4f "
           "| 1.00 |\n",
           b_an, b_op, op_solves, b_ac, bare);
    printf("| `stagesim run`, every node written: wall | %.4f | %.2f |\n", wall_all,
           wall_all / bare);
    printf("| `stagesim run`, every node written: CPU | %.4f | %.2f |\n", cpu_all,
           cpu_all / bare);
    printf("| `stagesim run --nodes %s`: wall | %.4f | %.2f |\n", last, wall_one,
           wall_one / bare);
    printf("| `stagesim run --nodes %s`: CPU | %.4f | %.2f |\n", last, cpu_one, cpu_one / bare);
    printf("| in process, all steps | %.4f | %.2f |\n", inproc, inproc / bare);
    printf("| · read + parse | %.4f | %.2f |\n", t_parse, t_parse / bare);
    printf("| · solver context + prepare (topology, pattern, klu_analyze) | %.4f | %.2f |\n",
           t_prep, t_prep / bare);
    printf("| · operating point (Newton, verification, op table) | %.4f | %.2f |\n", t_op,
           t_op / bare);
    printf("| · write op.csv | %.4f | %.2f |\n", t_wop, t_wop / bare);
    printf("| · AC sweep written to ac.csv while solving (as run does) | %.4f | %.2f |\n", t_wac,
           t_wac / bare);
    printf("| for comparison: the AC sweep alone, no output | %.4f | %.2f of bare AC %.4f |\n",
           t_ac_bare_loop, t_ac_bare_loop / b_ac, b_ac);
    printf("| for comparison: the AC sweep into a table (ss_ac_sweep_run) | %.4f | |\n",
           t_ac_table);
    ss_table_destroy(&op);
    ss_table_destroy(&ac);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    return 0;
}
