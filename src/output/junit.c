/* JUnit-style XML report of check verdicts: the subset CI systems read (testsuites /
 * testsuite / testcase / failure), written atomically. Judging is src/study's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "netlist/circuit.h"
#include "output/output.h"
#include "util/table.h"

static void xml_text(ss_strbuf *b, const char *s) { xml_put_text(b, s); }

static void put(ss_strbuf *b, const char *s) { strbuf_append(b, s, strlen(s)); }

/* One testcase per limit of v, then (lint_sv not NULL) one failing testcase per lint warning
 * of lint_sv: `CHECK SUBJECT` in class stagesim.lint.SUITE, the warning as the message. */
static ss_status write_junit(const ss_table *v, const ss_solver *lint_sv,
                             const char *suite_name, const char *path, ss_error *err)
{
    int failures = 0, n_lint = 0;
    for (int i = 0; i < v->n_rows; i++)
        failures += v->data[(size_t)i * 5 + 4] == 0.0;
    for (int i = 0; lint_sv && ss_solver_warning(lint_sv, i); i++)
        n_lint += ss_solver_warning_lint(lint_sv, i, NULL) != NULL;
    failures += n_lint;
    ss_strbuf b = {0};
    strbuf_printf(&b, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites tests=\"%d\" "
                      "failures=\"%d\" errors=\"0\">\n  <testsuite name=\"",
                  v->n_rows + n_lint, failures);
    xml_text(&b, suite_name);
    strbuf_printf(&b, "\" tests=\"%d\" failures=\"%d\" errors=\"0\" skipped=\"0\" time=\"0\">\n",
                  v->n_rows + n_lint, failures);
    for (int i = 0; i < v->n_rows; i++) {
        const double *r = v->data + (size_t)i * 5;
        strbuf_append(&b, "    <testcase name=\"", 20);
        xml_text(&b, v->row_labels[i]);
        strbuf_append(&b, "\" classname=\"stagesim.check.", 28);
        xml_text(&b, suite_name);
        strbuf_append(&b, "\" time=\"0\"", 10);
        char meas[40], lo[40], hi[40];
        output_format_double(meas, sizeof meas, r[0]);
        output_format_double(lo, sizeof lo, r[1]);
        output_format_double(hi, sizeof hi, r[2]);
        if (r[4] != 0.0) {
            strbuf_append(&b, "/>\n", 3);
            continue;
        }
        char msg[200];
        if (isnan(r[0]))
            snprintf(msg, sizeof msg, "no value (e.g. a corner outside the swept range)");
        else if (!isnan(r[1]) && r[0] < r[1])
            snprintf(msg, sizeof msg, "measured %s, below the lower limit %s", meas, lo);
        else
            snprintf(msg, sizeof msg, "measured %s, above the upper limit %s", meas, hi);
        strbuf_append(&b, ">\n      <failure message=\"", 26);
        xml_text(&b, msg);
        strbuf_printf(&b, "\" type=\"limit\">measured=%s lower=%s upper=%s</failure>\n    "
                          "</testcase>\n",
                      meas[0] ? meas : "none", lo[0] ? lo : "none", hi[0] ? hi : "none");
    }
    for (int i = 0; lint_sv && ss_solver_warning(lint_sv, i); i++) {
        const char *subject = NULL;
        const char *check = ss_solver_warning_lint(lint_sv, i, &subject);
        if (!check)
            continue;
        put(&b, "    <testcase name=\"");
        xml_text(&b, check);
        put(&b, " ");
        xml_text(&b, subject ? subject : "");
        put(&b, "\" classname=\"stagesim.lint.");
        xml_text(&b, suite_name);
        put(&b, "\" time=\"0\">\n      <failure message=\"");
        xml_text(&b, ss_solver_warning(lint_sv, i));
        put(&b, "\" type=\"lint\">");
        xml_text(&b, ss_solver_warning(lint_sv, i));
        put(&b, "</failure>\n    </testcase>\n");
    }
    strbuf_append(&b, "  </testsuite>\n</testsuites>\n", 29);
    return output_write_strbuf(&b, path, err);
}

ss_status ss_check_write_junit(const ss_table *v, const char *suite_name, const char *path,
                               ss_error *err)
{
    return write_junit(v, NULL, suite_name, path, err);
}

ss_status ss_check_write_junit_strict(const ss_table *v, const ss_solver *lint_sv,
                                      const char *suite_name, const char *path, ss_error *err)
{
    return write_junit(v, lint_sv, suite_name, path, err);
}
