/* stagesim check: the figures judged against the limits, the verdict table and the JUnit report.
 * The figures and verdicts are the library's; the output set is common.c's. */
#include <stdio.h>

#include "cli.h"

/* ---- check ------------------------------------------------------------------------------ */

int cmd_check(const cli_args *a)
{
    /* the CSVs go to a folder only with -o; the JUnit report anywhere: both are reserved (and
     * checked against each other) before the netlist is read */
    int has_dir = a->out_dir_given;
    ss_outset *set = NULL;
    ss_error err = {0};
    const char *path[2] = {NULL, NULL}, *junit = NULL, *html_path = NULL;
    ss_html *html = NULL;
    static const char *const names[2] = {"check.csv", "figures.csv"};
    int rc = EXIT_OK;
    if (has_dir) {
        rc = out_open(a, &set);
        if (rc == EXIT_OK)
            rc = out_reserve(set, a->out_dir, names, 2, path);
    } else if ((a->junit || a->html) && ss_outset_open(NULL, &set, &err) != SS_OK) {
        rc = fail(&err);
    }
    if (rc == EXIT_OK && a->junit && ss_outset_add(set, a->junit, "--junit", &junit, &err) != SS_OK)
        rc = fail(&err);
    if (rc == EXIT_OK)
        rc = html_start(a, set, &html, &html_path);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_circuit *ckt = NULL;
    ss_solver *sv = NULL;
    ss_limits *lim = NULL;
    ss_table *figs = NULL, *verdicts = NULL;
    rc = load_circuit(a, &ckt, &sv);
    if (rc != EXIT_OK) {
        ss_html_destroy(&html);
        ss_outset_destroy(&set);
        return rc;
    }
    int n_failed = 0, n_lint = 0;
    if (ss_limits_create(&lim, &err) != SS_OK || ss_limits_add_circuit(lim, ckt, &err) != SS_OK ||
        (a->limits_path && ss_limits_add_file(lim, a->limits_path, &err) != SS_OK) ||
        (has_dir && ss_outset_note_circuit(set, ckt, &err) != SS_OK)) {
        rc = fail(&err);
        goto done;
    }
    if (ss_limits_check_names(lim, sv, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    if (ss_limits_count(lim) == 0) {
        fprintf(stderr, "stagesim: %s: no limits to check: add .expect lines to the netlist or "
                        "give a limits file\n",
                a->netlist);
        rc = EXIT_BAD_INPUT;
        goto done;
    }
    if (ss_figures_compute(sv, lim, &figs, &err) != SS_OK ||
        ss_check_evaluate(lim, figs, &verdicts, &n_failed, &err) != SS_OK ||
        ss_lint_run(sv, &n_lint, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    if (has_dir && (write_table(verdicts, path[0], &err) != 0 ||
                    write_table(figs, path[1], &err) != 0)) {
        rc = fail(&err);
        goto done;
    }
    if (a->junit && ss_check_write_junit_strict(verdicts, a->strict ? sv : NULL, a->netlist,
                                                junit, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    if (html && (ss_html_add_verdicts(html, "Verdicts", verdicts, &err) != SS_OK ||
                 (a->strict && n_lint &&
                  ss_html_fail(html, "--strict: the lint warnings fail the check", &err) !=
                      SS_OK) ||
                 ss_html_add_run(html, sv, NULL, &err) != SS_OK ||
                 ss_html_add_table(html, "Figures", figs, 0, &err) != SS_OK ||
                 ss_html_add_warnings(html, sv, &err) != SS_OK ||
                 html_finish(html, set, html_path, &err) != 0)) {
        rc = fail(&err);
        goto done;
    }
    int n = ss_table_rows(verdicts);
    if (!a->quiet) {
        printf("check %s: %d limit%s\n\n", a->netlist, n, n == 1 ? "" : "s");
        printf("  %-24s %13s %13s %13s %13s  %s\n", "quantity", "measured", "lower", "upper",
               "margin", "verdict");
        static const char *const bounds[] = {"measured", "lower", "upper", "margin"};
        int pass_col = ss_table_col_index(verdicts, "pass");
        for (int i = 0; i < n; i++) {
            printf("  %-24s", ss_table_row_label(verdicts, i));
            for (int j = 0; j < 4; j++)
                print_figure(ss_table_get(verdicts, i, ss_table_col_index(verdicts, bounds[j])),
                             ss_table_row_label(verdicts, i));
            printf("  %s\n", ss_table_get(verdicts, i, pass_col) != 0.0 ? "pass" : "FAIL");
        }
        printf("\n%d passed, %d failed\n", n - n_failed, n_failed);
        if (a->strict && n_lint)
            printf("%d sanity warning%s (lint): --strict fails the check\n", n_lint,
                   n_lint == 1 ? "" : "s");
    }
    for (int i = 0; ss_solver_warning(sv, i); i++)
        fprintf(stderr, "stagesim: warning: %s\n", ss_solver_warning(sv, i));
    rc = n_failed || (a->strict && n_lint) ? EXIT_CHECK_FAILED : EXIT_OK;
    if (set)
        rc = out_commit(set, rc);
done:
    ss_html_destroy(&html);
    ss_table_destroy(&figs);
    ss_table_destroy(&verdicts);
    ss_limits_destroy(&lim);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    ss_outset_destroy(&set);
    return rc;
}
