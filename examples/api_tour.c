/* A tour of the library (docs/api.md): parse once, solve on a context, change values by name
 * without parsing again, run two contexts of one circuit in two threads, stream an analysis
 * into a sink. Build: see docs/api.md. Run: api_tour NETLIST (the vibration front-end). */
#include <pthread.h>
#include <stdio.h>

#include "stagesim/stagesim.h"

static int report(const char *what, ss_status st, const ss_error *err)
{
    char msg[1400];
    ss_error_format(err, msg, sizeof msg);
    fprintf(stderr, "api_tour: %s: %s (%s)\n", what, msg, ss_status_name(st));
    return 1;
}

/* The stage's mid-band gain in dB on a context (solves what it needs). */
static ss_status gain_mid_db(ss_solver *sv, double *out, ss_error *err)
{
    ss_table *stage = NULL, *summary = NULL;
    ss_status st = ss_stage_run(sv, &stage, &summary, err);
    if (st == SS_OK)
        *out = ss_table_lookup(summary, "gain_mid_db", 0);
    ss_table_destroy(&stage);
    ss_table_destroy(&summary);
    return st;
}

typedef struct job {
    const ss_circuit *ckt;
    double rc_ohm, gain_db;
    ss_status st;
} job;

/* One thread, one context: the circuit is shared, read-only. */
static void *run_job(void *arg)
{
    job *j = arg;
    ss_error err = {0};
    ss_solver *sv = NULL;
    j->st = ss_solver_create(j->ckt, &sv, &err);
    if (j->st == SS_OK)
        j->st = ss_solver_set_value(sv, "RC", j->rc_ohm, &err);
    if (j->st == SS_OK)
        j->st = gain_mid_db(sv, &j->gain_db, &err);
    ss_solver_destroy(&sv);
    return NULL;
}

/* A sink of our own: counts the AC rows and keeps the largest output magnitude. */
typedef struct peak {
    int col;
    long rows;
    double max_v;
} peak;

static int peak_begin(void *ctx, int n_cols, const char *const *names, long n_rows)
{
    peak *p = ctx;
    (void)n_rows;
    p->col = -1;
    for (int c = 0; c < n_cols; c++)
        if (names[c][0] == 'v' && names[c][1] == 'm' && names[c][3] == 'o' &&
            names[c][4] == 'u' && names[c][5] == 't' && names[c][6] == ')')
            p->col = c;
    return p->col < 0; /* no vm(out) column: stop */
}

static int peak_row(void *ctx, const double *values, int n_cols)
{
    peak *p = ctx;
    (void)n_cols;
    p->rows++;
    if (values[p->col] > p->max_v)
        p->max_v = values[p->col];
    return 0;
}

int main(int argc, char **argv)
{
    if (argc != 2) {
        fprintf(stderr, "usage: api_tour NETLIST\n");
        return 2;
    }
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    ss_status st = ss_circuit_parse_file(argv[1], NULL, 0, &ckt, &err);
    if (st != SS_OK)
        return report("parse", st, &err);

    /* 1. a context, the operating point, the stage */
    ss_solver *sv = NULL;
    double g0 = 0.0, g1 = 0.0, vc = 0.0;
    ss_table *op = NULL;
    st = ss_solver_create(ckt, &sv, &err);
    if (st == SS_OK)
        st = ss_op_solve(sv, &op, NULL, &err);
    if (st == SS_OK) {
        vc = ss_table_lookup(op, "v(c)", 0);
        st = gain_mid_db(sv, &g0, &err);
    }
    ss_table_destroy(&op);
    if (st != SS_OK)
        return report("nominal", st, &err);
    printf("nominal: v(c) = %.4f V, mid-band gain %.3f dB\n", vc, g0);

    /* 2. a value by name: no parse, the circuit unchanged */
    st = ss_solver_set_value(sv, "RC", 6.8e3, &err);
    if (st == SS_OK)
        st = gain_mid_db(sv, &g1, &err);
    if (st != SS_OK)
        return report("RC = 6.8k", st, &err);
    printf("RC = 6.8k: mid-band gain %.3f dB\n", g1);
    ss_solver_reset_values(sv);

    /* 3. two contexts of the one circuit, two threads */
    job a = {ckt, 4.7e3, 0.0, SS_OK}, b = {ckt, 6.8e3, 0.0, SS_OK};
    pthread_t ta, tb;
    if (pthread_create(&ta, NULL, run_job, &a) != 0 || pthread_create(&tb, NULL, run_job, &b))
        return 1;
    pthread_join(ta, NULL);
    pthread_join(tb, NULL);
    if (a.st != SS_OK || b.st != SS_OK)
        return 1;
    printf("threads: RC = 4.7k %.3f dB, RC = 6.8k %.3f dB (%s as above)\n", a.gain_db,
           b.gain_db, b.gain_db == g1 ? "the same bits" : "NOT the same");

    /* 4. the AC sweep into a sink of our own */
    peak pk = {0, 0, 0.0};
    ss_sink_callbacks cb = {peak_begin, peak_row, NULL, NULL};
    ss_sink *sink = NULL;
    st = ss_sink_create(&cb, &pk, &sink, &err);
    if (st == SS_OK)
        st = ss_ac_sweep_emit(sv, sink, &err);
    ss_sink_destroy(&sink);
    if (st != SS_OK)
        return report("ac", st, &err);
    printf("ac: %ld frequencies, largest |v(out)| %.3f V per V\n", pk.rows, pk.max_v);

    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    return 0;
}
