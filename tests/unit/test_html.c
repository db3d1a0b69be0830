/* Unit tests of the HTML report writer: escaping of every name, the SVG prolog dropped, the
 * verdict banner, refused inputs, and allocation failures (every one a clean SS_ERR_NOMEM, no
 * file left). How the page looks is checked in a browser (tests/cli/test_html.py). */
#define _XOPEN_SOURCE 700

#include <stdlib.h>
#include <unistd.h>

#include "ss_test.h"
#include "util/util.h"

static const char *CKT =
    "Title <b>&\"q\"\xff\n"
    "V<1>& in 0 DC 1 AC 1\n"
    "R1 in out 1k\n"
    "R2 out 0 1k\n"
    ".end\n";

static char *read_all(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *s = malloc((size_t)n + 1);
    size_t got = fread(s, 1, (size_t)n, f);
    s[got] = '\0';
    fclose(f);
    return s;
}

static void temp_path(char *buf, size_t len)
{
    const char *base = getenv("TMPDIR");
    snprintf(buf, len, "%s/stagesim_html_XXXXXX", base && base[0] ? base : P_tmpdir);
    assert_non_null(mkdtemp(buf));
}

/* A page with a hostile title, element name, warning and plot caption. Returns the status of
 * the first step that failed (or of the write). */
static ss_status build_page(ss_solver *sv, const ss_table *op, const char *path, ss_error *err)
{
    ss_html *h = NULL;
    static const char svg[] = "<?xml version=\"1.0\"?>\n<!DOCTYPE svg>\n<svg xmlns=\"http://www."
                              "w3.org/2000/svg\" width=\"10\" height=\"10\"></svg>\n";
    ss_status st = ss_html_create(NULL, "sub <&>", &h, err);
    if (st == SS_OK)
        st = ss_html_add_run(h, sv, NULL, err);
    if (st == SS_OK)
        st = ss_html_add_warning(h, "warn <x> & \"y\"", "one_connection", err);
    if (st == SS_OK)
        st = ss_html_add_table(h, "Op <table>", op, 0, err);
    if (st == SS_OK)
        st = ss_html_add_svg(h, "cap<&>", svg, sizeof svg - 1, err);
    if (st == SS_OK)
        st = ss_html_write(h, path, err);
    ss_html_destroy(&h);
    return st;
}

static void test_escapes_everything(void **state)
{
    (void)state;
    ss_circuit *ckt = NULL;
    ss_table *op = ss_test_op(CKT, &ckt);
    ss_solver *sv = ss_test_sv(ckt);
    char dir[512], path[600];
    temp_path(dir, sizeof dir);
    snprintf(path, sizeof path, "%s/r.html", dir);
    ss_error err = {0};
    assert_int_equal(build_page(sv, op, path, &err), SS_OK);
    char *page = read_all(path);
    assert_non_null(page);
    assert_non_null(strstr(page, "<!DOCTYPE html>"));
    assert_non_null(strstr(page, "<meta charset=\"utf-8\">"));
    /* the title: markup as references, the stray byte as U+FFFD */
    assert_non_null(strstr(page, "<h1>Title &lt;b&gt;&amp;&quot;q&quot;\xEF\xBF\xBD</h1>"));
    assert_non_null(strstr(page, "i(v&lt;1&gt;&amp;)"));
    assert_non_null(strstr(page, "warn &lt;x&gt; &amp; &quot;y&quot;"));
    assert_non_null(strstr(page, "lint one_connection"));
    assert_non_null(strstr(page, "cap&lt;&amp;&gt;"));
    assert_non_null(strstr(page, "sub &lt;&amp;&gt;"));
    /* the SVG inline, without its prolog */
    assert_null(strstr(page, "<?xml"));
    assert_null(strstr(page, "<!DOCTYPE svg"));
    assert_non_null(strstr(page, "<figure>\n<svg xmlns="));
    assert_null(strstr(page, "<script"));
    /* 1 kOhm over 1 kOhm from 1 V: v(out) = 0.5 V exactly, shown and in data-v */
    assert_non_null(strstr(page, "data-v=\"0.5\">500 mV<"));
    free(page);
    unlink(path);
    rmdir(dir);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

static void test_refused_inputs(void **state)
{
    (void)state;
    ss_circuit *ckt = NULL;
    ss_table *op = ss_test_op(CKT, &ckt);
    ss_html *h = NULL;
    ss_error err = {0};
    assert_int_equal(ss_html_create("t", NULL, &h, &err), SS_OK);
    /* op.csv's table is not a verdict table */
    assert_int_equal(ss_html_add_verdicts(h, "v", op, &err), SS_ERR_INPUT);
    assert_int_equal(ss_html_add_svg(h, "c", "<p>no plot</p>", 14, &err), SS_ERR_INPUT);
    assert_int_equal(ss_html_write(h, "", &err), SS_ERR_INPUT);
    ss_html_destroy(&h);
    ss_html_destroy(&h); /* NULL is accepted */
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

static void test_allocation_failures_are_clean(void **state)
{
    (void)state;
    ss_circuit *ckt = NULL;
    ss_table *op = ss_test_op(CKT, &ckt);
    ss_solver *sv = ss_test_sv(ckt);
    char dir[512], path[600];
    temp_path(dir, sizeof dir);
    snprintf(path, sizeof path, "%s/r.html", dir);
    ss_status st = SS_ERR_NOMEM;
    long n_fail;
    for (n_fail = 0; n_fail < 10000 && st != SS_OK; n_fail++) {
        ss_error err = {0};
        ss_alloc_fail_at(n_fail);
        st = build_page(sv, op, path, &err);
        ss_alloc_fail_at(-1);
        if (st != SS_OK) {
            assert_int_equal(st, SS_ERR_NOMEM);
            assert_int_equal(access(path, F_OK), -1); /* nothing written */
        }
    }
    assert_int_equal(st, SS_OK);
    assert_true(n_fail > 3);
    unlink(path);
    rmdir(dir);
    ss_table_destroy(&op);
    ss_test_destroy(&ckt);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_escapes_everything),
        cmocka_unit_test(test_refused_inputs),
        cmocka_unit_test(test_allocation_failures_are_clean),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
