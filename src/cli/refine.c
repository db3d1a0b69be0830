/* stagesim refine: the preferred values of a netlist's .choose values that meet every limit with
 * the largest margin at the nominal point and at the named corners (the search is the
 * library's, src/design/search.c); this file reads the options, writes the files and prints the
 * report. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "cli.h"

/* --beta-range LO,HI: factors of each model's BF when both end in x (0.5x,2x), else absolute
 * BF values (50,400). */
static int beta_range(const char *spec, double *lo, double *hi, int *relative)
{
    static const char needs[] =
        "LO,HI: factors of each model's BF (0.5x,2x) or BF values (50,400), 0 < LO < HI";
    char buf[128];
    char *comma = strlen(spec) < sizeof buf ? strchr(strcpy(buf, spec), ',') : NULL;
    if (!comma)
        return usage_errorf("--beta-range needs %s, got '%s'", needs, spec);
    *comma = '\0';
    char *a = buf, *b = comma + 1;
    size_t la = strlen(a), lb = strlen(b);
    int xa = la > 0 && (a[la - 1] == 'x' || a[la - 1] == 'X');
    int xb = lb > 0 && (b[lb - 1] == 'x' || b[lb - 1] == 'X');
    if (xa != xb)
        return usage_errorf("--beta-range needs %s (both factors or both values), got '%s'",
                            needs, spec);
    if (xa) {
        a[la - 1] = '\0';
        b[lb - 1] = '\0';
    }
    ss_error err = {0};
    if (ss_value_parse(a, lo, &err) != SS_OK || ss_value_parse(b, hi, &err) != SS_OK)
        return usage_errorf("--beta-range needs %s: %s", needs, err.message);
    if (!(*lo > 0.0 && *lo < *hi))
        return usage_errorf("--beta-range needs %s, got '%s'", needs, spec);
    *relative = xa;
    return EXIT_OK;
}

int parse_refine_option(const char *n, const char *next, cli_args *a)
{
    if (strcmp(n, "--beta-range") == 0) {
        double lo, hi;
        int rel;
        int rc = beta_range(next, &lo, &hi, &rel);
        if (rc != EXIT_OK)
            return rc;
        a->beta_range = next;
    } else if (strcmp(n, "--supply-tol") == 0) {
        a->supply_tols[a->n_supply_tols++] = next;
    } else if (strcmp(n, "--max-candidates") == 0) {
        unsigned long long v;
        if (parse_count(next, 10000000ull, &v) != 0 || v < 10)
            return usage_error("--max-candidates needs a whole number from 10 to 10000000, "
                               "got '%s'",
                               next);
        a->max_candidates = (long)v;
    } else {
        return -1;
    }
    return EXIT_OK;
}

typedef struct progress {
    double t0, last;
    int quiet;
} progress;

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* A line on stderr at most once a second, from the second second on. */
static void on_progress(void *ctx, long done, long total)
{
    progress *p = ctx;
    double t = now_s();
    if (p->quiet || t - p->t0 < 1.0 || t - p->last < 1.0)
        return;
    p->last = t;
    fprintf(stderr, "refine: %ld of at most %ld candidates, %.0f s\n", done, total, t - p->t0);
}

static int setup(const cli_args *a, ss_refine **out)
{
    ss_error err = {0};
    ss_refine *r = NULL;
    ss_limits *lim = NULL;
    if (ss_refine_create(a->netlist, a->sets, a->n_sets, &r, &err) != SS_OK)
        return fail(&err);
    int rc = EXIT_OK;
    if ((a->in_src || a->out_node) && (!a->in_src || !a->out_node)) {
        fprintf(stderr, "stagesim: --in and --out go together\n");
        rc = EXIT_BAD_INPUT;
    } else if (a->in_src && ss_refine_set_stage(r, a->in_src, a->out_node, &err) != SS_OK) {
        rc = fail(&err);
    }
    if (rc == EXIT_OK && a->limits_path &&
        (ss_limits_create(&lim, &err) != SS_OK ||
         ss_limits_add_file(lim, a->limits_path, &err) != SS_OK ||
         ss_refine_add_limits(r, lim, &err) != SS_OK))
        rc = fail(&err);
    if (rc == EXIT_OK && a->beta_range) {
        double lo = 0.0, hi = 0.0;
        int rel = 0;
        rc = beta_range(a->beta_range, &lo, &hi, &rel);
        if (rc == EXIT_OK && ss_refine_set_beta_range(r, lo, hi, rel, &err) != SS_OK)
            rc = fail(&err);
    }
    if (rc == EXIT_OK && a->temps_given &&
        ss_refine_set_temps(r, a->temp_lo, a->temp_hi, &err) != SS_OK)
        rc = fail(&err);
    for (int i = 0; rc == EXIT_OK && i < a->n_supply_tols; i++)
        if (ss_refine_add_supply_tol(r, a->supply_tols[i], &err) != SS_OK) {
            fprintf(stderr, "stagesim: --supply-tol: %s\n", err.message);
            rc = EXIT_BAD_INPUT;
        }
    if (rc == EXIT_OK && a->n_tols == 0 && (a->trials > 0 || a->seed_given || a->min_yield >= 0.0)) {
        fprintf(stderr, "stagesim: refine: %s needs tolerances (--tol NAME=SPEC): without them "
                        "there is no yield to judge\n",
                a->trials > 0 ? "--trials" : a->seed_given ? "--seed" : "--min-yield");
        rc = EXIT_BAD_INPUT;
    }
    for (int i = 0; rc == EXIT_OK && i < a->n_tols; i++)
        if (ss_refine_add_tolerance(r, a->tols[i], &err) != SS_OK) {
            fprintf(stderr, "stagesim: --tol: %s\n", err.message);
            rc = EXIT_BAD_INPUT;
        }
    if (rc == EXIT_OK && a->n_tols > 0 &&
        (ss_refine_set_trials(r, a->trials > 0 ? a->trials : 200, a->seed, &err) != SS_OK ||
         (a->min_yield >= 0.0 && ss_refine_set_min_yield(r, a->min_yield, &err) != SS_OK)))
        rc = fail(&err);
    if (rc == EXIT_OK && a->threads > 0 && ss_refine_set_threads(r, a->threads, &err) != SS_OK)
        rc = fail(&err);
    if (rc == EXIT_OK && a->max_candidates > 0 &&
        ss_refine_set_budget(r, a->max_candidates, &err) != SS_OK)
        rc = fail(&err);
    ss_limits_destroy(&lim);
    if (rc != EXIT_OK) {
        ss_refine_destroy(&r);
        return rc;
    }
    *out = r;
    return EXIT_OK;
}

static void print_report(const ss_refine *r, const ss_table *design, const ss_table *margins,
                         const ss_table *path, const ss_table *yield)
{
    ss_refine_stats s;
    ss_refine_get_stats(r, &s);
    double per_s = s.seconds > 0 ? s.candidates / s.seconds : 0.0;
    printf("refine: %d free value%s, %d limit%s, %d corner%s\n", s.n_free, s.n_free == 1 ? "" : "s",
           s.n_limits, s.n_limits == 1 ? "" : "s", s.n_corners, s.n_corners == 1 ? "" : "s");
    printf("searched %ld candidates (%ld circuits solved, %ld without an operating point) in "
           "%.2f s on %d threads:\n  %.0f candidates/s, %.0f circuits/s, %.0f circuits/s per "
           "thread\n",
           s.candidates, s.circuits, s.failed_circuits, s.seconds, s.threads, per_s,
           s.seconds > 0 ? s.circuits / s.seconds : 0.0,
           s.seconds > 0 ? s.circuits / s.seconds / s.threads : 0.0);
    printf("\npath (phase 0 start, 1 continuous, 2 one value a step, 3 two values, 4 chosen)\n");
    printf("  %4s %5s %10s %11s  %s\n", "step", "phase", "candidates", "min margin", "binding");
    int c_ph = ss_table_col_index(path, "phase"), c_ca = ss_table_col_index(path, "candidates"),
        c_mm = ss_table_col_index(path, "min_margin");
    for (int i = 0; i < ss_table_rows(path); i++)
        printf("  %4d %5.0f %10.0f %11.4g  %s\n", i, ss_table_get(path, i, c_ph),
               ss_table_get(path, i, c_ca), ss_table_get(path, i, c_mm),
               ss_table_row_label(path, i));
    printf("\nchosen values\n  %-16s %13s %13s %7s\n", "name", "start", "chosen", "series");
    int c_st = ss_table_col_index(design, "start"), c_ch = ss_table_col_index(design, "chosen"),
        c_se = ss_table_col_index(design, "series");
    for (int i = 0; i < ss_table_rows(design); i++)
        printf("  %-16s %13.6g %13.6g     E%.0f\n", ss_table_row_label(design, i),
               ss_table_get(design, i, c_st), ss_table_get(design, i, c_ch),
               ss_table_get(design, i, c_se));
    printf("\nnormalised margins of the chosen design (docs/refine.md)\n  %-24s", "limit");
    int nc = (ss_table_cols(margins) - 4) / 2;
    for (int k = 0; k < nc; k++)
        printf(" %16s", ss_table_col_name(margins, 3 + 2 * k) + 7);
    printf("\n");
    for (int i = 0; i < ss_table_rows(margins); i++) {
        printf("  %-24s", ss_table_row_label(margins, i));
        for (int k = 0; k < nc; k++) {
            double m = ss_table_get(margins, i, 3 + 2 * k);
            if (isnan(m))
                printf(" %16s", "-");
            else
                printf(" %16.4g", m);
        }
        printf("\n");
    }
    if (s.feasible && s.trials == 0)
        printf("\nevery limit met at every corner (smallest margin %.4g)\n", s.min_margin);
    else if (s.feasible)
        printf("\nevery limit met at the nominal values (smallest margin %.4g)\n", s.min_margin);
    if (yield) {
        printf("\nyield of the chosen design: %ld of %ld trials meet every limit, %.1f %% "
               "(95 %% Wilson interval %.1f .. %.1f %%)",
               s.passed, s.trials, 100.0 * s.yield, 100.0 * s.yield_lo95, 100.0 * s.yield_hi95);
        if (s.min_yield >= 0.0)
            printf(", target %.1f %%: %s", 100.0 * s.min_yield,
                   s.yield >= s.min_yield ? "met" : "NOT met");
        printf("\n  %ld trials per candidate; %ld of %ld candidates met every limit at their "
               "nominal values and were given the trials\n",
               s.trials, s.mc_candidates, s.candidates);
        if (s.mc_candidates > 0)
            printf("  the trials took %.2f s: %.2f ms per candidate given them\n", s.mc_seconds,
                   1e3 * s.mc_seconds / (double)s.mc_candidates);
        printf("  %-24s %8s %8s\n", "limit", "failing", "of");
        int c_f = ss_table_col_index(yield, "failing");
        for (int i = 1; i < ss_table_rows(yield); i++)
            printf("  %-24s %8.0f %8ld\n", ss_table_row_label(yield, i),
                   ss_table_get(yield, i, c_f), s.trials);
    }
    printf("\nA design found by simulation is a starting point for the bench: build it and "
           "measure it.\nRatings (dissipation, voltage) are checked only as far as the limits "
           "name them.\n");
}

int cmd_refine(const cli_args *a)
{
    static const char *const names[5] = {"refined.cir", "design.csv", "design_margins.csv",
                                         "refine_path.csv", "design_yield.csv"};
    const char *path[5];
    ss_outset *set = NULL;
    int rc = out_start(a, names, a->n_tols > 0 ? 5 : 4, path, &set);
    if (rc != EXIT_OK)
        return rc;
    ss_refine *r = NULL;
    rc = setup(a, &r);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    progress pr = {now_s(), 0.0, a->quiet};
    ss_refine_set_progress(r, on_progress, &pr);
    ss_error err = {0};
    ss_table *design = NULL, *margins = NULL, *pth = NULL, *yield = NULL;
    if (ss_refine_run(r, &err) != SS_OK || ss_refine_tables(r, &design, &margins, &pth, &err) ||
        ss_refine_write_netlist(r, path[0], &err) != SS_OK ||
        write_table(design, path[1], &err) != 0 || write_table(margins, path[2], &err) != 0 ||
        write_table(pth, path[3], &err) != 0 ||
        (a->n_tols > 0 && (ss_refine_yield_table(r, &yield, &err) != SS_OK ||
                           write_table(yield, path[4], &err) != 0))) {
        rc = fail(&err);
        goto done;
    }
    if (!a->quiet)
        print_report(r, design, margins, pth, yield);
    rc = EXIT_OK;
    if (ss_refine_binding(r, 0)) {
        fprintf(stderr, "stagesim: refine: the best design found fails:");
        for (int i = 0; ss_refine_binding(r, i); i++)
            fprintf(stderr, "%s %s", i ? "," : "", ss_refine_binding(r, i));
        fprintf(stderr, "\n");
        rc = EXIT_CHECK_FAILED;
    }
    ss_refine_stats s;
    ss_refine_get_stats(r, &s);
    if (yield && s.min_yield >= 0.0 && !(s.yield >= s.min_yield)) {
        /* the limit failing the most trials binds the yield */
        int c_f = ss_table_col_index(yield, "failing"), worst = 1;
        for (int i = 2; i < ss_table_rows(yield); i++)
            if (ss_table_get(yield, i, c_f) > ss_table_get(yield, worst, c_f))
                worst = i;
        fprintf(stderr,
                "stagesim: refine: the best yield found is %.1f %% (%ld of %ld trials), below "
                "the target %.1f %%; the binding limit is %s (failing %.0f trials)\n",
                100.0 * s.yield, s.passed, s.trials, 100.0 * s.min_yield,
                ss_table_row_label(yield, worst), ss_table_get(yield, worst, c_f));
        rc = EXIT_CHECK_FAILED;
    }
    rc = out_commit(set, rc);
done:
    ss_table_destroy(&design);
    ss_table_destroy(&margins);
    ss_table_destroy(&pth);
    ss_table_destroy(&yield);
    ss_refine_destroy(&r);
    ss_outset_destroy(&set);
    return rc;
}
