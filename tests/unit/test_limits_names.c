/* Figures a limit may name, known before solving (ss_limits_check_names), against the labels
 * ss_figures_compute actually produces; the option-value number reader (ss_value_parse); a
 * --set name given twice; a swept name also --set. */
#define _DEFAULT_SOURCE
#include "ss_test.h"

#include <dirent.h>
#include <stdlib.h>
#include <unistd.h>

#include "study/study.h"

/* ---- the names predicted equal the labels computed ------------------------------------- */

typedef struct name_list {
    char **names;
    int n, cap;
} name_list;

static void collect(void *sink, const char *quantity, const char *elem_name, double value)
{
    (void)value;
    name_list *l = sink;
    if (l->n == l->cap) {
        l->cap = l->cap ? 2 * l->cap : 64;
        l->names = realloc(l->names, (size_t)l->cap * sizeof *l->names);
        assert_non_null(l->names);
    }
    char buf[1200];
    if (elem_name)
        snprintf(buf, sizeof buf, "%s(%s)", quantity, elem_name);
    else
        snprintf(buf, sizeof buf, "%s", quantity);
    l->names[l->n] = strdup(buf);
    assert_non_null(l->names[l->n]);
    l->n++;
}

static void list_clear(name_list *l)
{
    for (int i = 0; i < l->n; i++)
        free(l->names[i]);
    free(l->names);
    memset(l, 0, sizeof *l);
}

static ss_circuit *parse_example(const char *file)
{
    char path[1024];
    snprintf(path, sizeof path, "%s/netlists/%s", SS_SOURCE_DIR, file);
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    if (ss_circuit_parse_file(path, NULL, 0, &ckt, &err) != SS_OK) {
        char msg[1400];
        ss_error_format(&err, msg, sizeof msg);
        print_error("%s\n", msg);
        fail();
    }
    return ckt;
}

/* The figure labels computed for ckt under the limits text equal the names predicted, in the
 * same order; returns how many there are. */
static int compare_names(const char *file, const char *limits_text)
{
    ss_circuit *ckt = parse_example(file);
    ss_limits *lim = NULL;
    ss_error err = {0};
    assert_int_equal(ss_limits_create(&lim, &err), SS_OK);
    assert_int_equal(ss_limits_add_text(lim, limits_text, "t.limits", &err), SS_OK);
    name_list want = {0};
    figures_names(ss_test_sv(ckt), lim, collect, &want);
    assert_int_equal(ss_limits_check_names(lim, ss_test_sv(ckt), &err), SS_OK);
    ss_table *figs = NULL;
    if (ss_figures_compute(ss_test_sv(ckt), lim, &figs, &err) != SS_OK) {
        char msg[1400];
        ss_error_format(&err, msg, sizeof msg);
        print_error("%s: %s\n", file, msg);
        fail();
    }
    int n = ss_table_rows(figs);
    if (n != want.n)
        print_error("%s: %d figures computed, %d names predicted\n", file, n, want.n);
    for (int i = 0; i < n && i < want.n; i++)
        if (strcmp(ss_table_row_label(figs, i), want.names[i]) != 0) {
            print_error("%s: figure %d is '%s', predicted '%s'\n", file, i,
                        ss_table_row_label(figs, i), want.names[i]);
            fail();
        }
    assert_int_equal(n, want.n);
    list_clear(&want);
    ss_table_destroy(&figs);
    ss_limits_destroy(&lim);
    ss_test_destroy(&ckt);
    return n;
}

static void test_names_match_figures_of_every_example(void **state)
{
    (void)state;
    char dir[1024];
    snprintf(dir, sizeof dir, "%s/netlists", SS_SOURCE_DIR);
    DIR *d = opendir(dir);
    assert_non_null(d);
    int n_files = 0;
    for (struct dirent *e; (e = readdir(d)) != NULL;) {
        size_t len = strlen(e->d_name);
        if (len < 5 || strcmp(e->d_name + len - 4, ".cir") != 0)
            continue;
        /* the op.csv rows, stage summary and noise figures; then with figures at frequencies
         * (every example has a stage) */
        int n0 = compare_names(e->d_name, "");
        int n1 = compare_names(e->d_name, "gain_db @ 1k >= 0\nzout_ohm@10k <= 1meg\n"
                                          "gain_db@1000 >= 1\n");
        assert_int_equal(n1, n0 + 2); /* gain_db@1000 named twice is listed once */
        n_files++;
    }
    closedir(d);
    assert_true(n_files >= 5);
}

/* Large-signal figures (transient runs, so one example per source kind): a limit naming one
 * brings them all, with the names of the stage source's kind. */
static void test_names_match_large_signal_figures(void **state)
{
    (void)state;
    int nv0 = compare_names("vibration_frontend.cir", "");
    int nv = compare_names("vibration_frontend.cir", "swing_pos_v >= 0\n");
    assert_int_equal(nv, nv0 + 13);
    int ni0 = compare_names("photodiode_amp.cir", "");
    int ni = compare_names("photodiode_amp.cir", "thd_pct <= 100\n");
    assert_int_equal(ni, ni0 + 13);
}

/* ---- ss_limits_check_names: refusals ----------------------------------------------------- */

static const char STAGE_NET[] = "divider stage\n"
                                "v1 in 0 dc 10 ac 1\n"
                                "r1 in mid 10k\n"
                                "r2 mid 0 10k\n"
                                "c1 mid 0 1n\n"
                                "d1 mid 0 dx\n"
                                ".model dx d is=1e-14\n"
                                ".ac dec 5 10 1meg\n";

static void expect_name_error(const char *net, const char *limits, const char *want)
{
    ss_circuit *ckt = ss_test_parse(net);
    ss_limits *lim = NULL;
    ss_error err = {0};
    assert_int_equal(ss_limits_create(&lim, &err), SS_OK);
    assert_int_equal(ss_limits_add_text(lim, limits, "t.limits", &err), SS_OK);
    assert_int_equal(ss_limits_check_names(lim, ss_test_sv(ckt), &err), SS_ERR_INPUT);
    char msg[1400];
    ss_error_format(&err, msg, sizeof msg);
    assert_string_equal(msg, want);
    ss_limits_destroy(&lim);
    ss_test_destroy(&ckt);
}

static void test_check_names_refuses_what_does_not_exist(void **state)
{
    (void)state;
    expect_name_error(STAGE_NET, "v(mid) >= 1\nv(nosuch) >= 1\n",
                      "t.limits:2: limit on 'v(nosuch)': no such figure (the figures are the "
                      "op.csv quantities of this circuit's nodes and devices, the stage summary "
                      "metrics, the noise and large-signal figures and QUANTITY@FREQ; "
                      "docs/checks.md lists them)");
    /* a resistor has no op.csv row; a diode has id, not ic */
    expect_name_error(STAGE_NET, "i(r1) >= 0\n",
                      "t.limits:1: limit on 'i(r1)': no such figure (the figures are the op.csv "
                      "quantities of this circuit's nodes and devices, the stage summary metrics, "
                      "the noise and large-signal figures and QUANTITY@FREQ; docs/checks.md lists "
                      "them)");
    expect_name_error(STAGE_NET, "gain_mid_db >= 1\n",
                      "t.limits:1: limit on 'gain_mid_db': no such figure (a stage summary metric "
                      "needs a stage (.stage or --in/--out))");
    expect_name_error(STAGE_NET, "noise_figure_db <= 3\n",
                      "t.limits:1: limit on 'noise_figure_db': no such figure (a noise figure "
                      "needs .noise and an .ac sweep or a noise band (band=F1..F2))");
    expect_name_error(STAGE_NET, "gain_db @ 1k >= 1\n",
                      "t.limits:1: limit on gain_db@1000 needs a stage: add `.stage in=SOURCE "
                      "out=NODE`");
    char net[1024];
    snprintf(net, sizeof net, "%s.stage in=v1 out=mid\n", STAGE_NET);
    expect_name_error(net, "iin_at_thd_a <= 1\n",
                      "t.limits:1: limit on 'iin_at_thd_a': no such figure (the stage source's "
                      "kind names its input figures: vin_..._v and thd_amp_v for a V source, "
                      "iin_..._a and thd_amp_a for an I source)");
}

static void test_check_names_accepts_every_kind(void **state)
{
    (void)state;
    char net[1024];
    snprintf(net, sizeof net, "%s.stage in=v1 out=mid\n.noise v(mid) v1\n", STAGE_NET);
    ss_circuit *ckt = ss_test_parse(net);
    ss_limits *lim = NULL;
    ss_error err = {0};
    assert_int_equal(ss_limits_create(&lim, &err), SS_OK);
    assert_int_equal(ss_limits_add_text(lim,
                                        "V(MID) >= 0\ni(v1) <= 0\nid(d1) >= 0\nf_high_hz >= 1\n"
                                        "in_noise_rms_v <= 1\nvin_at_thd_v >= 0\n"
                                        "phase_deg @ 2k >= -90\n",
                                        "t.limits", &err),
                     SS_OK);
    assert_int_equal(ss_limits_check_names(lim, ss_test_sv(ckt), &err), SS_OK);
    assert_int_equal(ss_limits_check_names(NULL, ss_test_sv(ckt), &err), SS_OK);
    ss_limits_destroy(&lim);
    ss_test_destroy(&ckt);
}

/* ---- ss_value_parse: the numbers of option values ---------------------------------------- */

static void test_value_parse_accepts_numbers_with_si_suffixes(void **state)
{
    (void)state;
    /* SI prefixes (common practice of netlist languages): m milli, meg mega */
    const struct {
        const char *text;
        double value;
    } ok[] = {{"10k", 1e4},    {"4.7meg", 4.7e6}, {"4.7MEG", 4.7e6}, {"100n", 1e-7},
              {"-40", -40.0},  {"+2.5e3", 2500.0}, {"1e-3", 1e-3},   {".5", 0.5},
              {"10m", 0.01},   {"1K", 1000.0},    {"0", 0.0},        {"3p", 3e-12}};
    for (size_t i = 0; i < sizeof ok / sizeof ok[0]; i++) {
        double v = -1.0;
        ss_error err = {0};
        assert_int_equal(ss_value_parse(ok[i].text, &v, &err), SS_OK);
        ss_assert_close(v, ok[i].value, 1e-15, 0.0);
    }
}

static void test_value_parse_refuses_the_rest(void **state)
{
    (void)state;
    const char *bad[] = {"",     "inf",   "nan",   "-inf", "0x1p4", "85junk", "10kohm",
                         "1e400", "1..2", "k",     " 5",   "5 ",    "1,5",    "e3",
                         "1M",   "--1",   "1.5.3", "10Hz"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        double v = 123.0;
        ss_error err = {0};
        if (ss_value_parse(bad[i], &v, &err) != SS_ERR_INPUT) {
            print_error("'%s' was accepted as %g\n", bad[i], v);
            fail();
        }
        assert_true(v == 123.0);
    }
    ss_error err = {0};
    double v;
    assert_int_equal(ss_value_parse("1M", &v, &err), SS_ERR_INPUT);
    assert_string_equal(err.message,
                        "'1M': M is milli here as in the netlist; write 1m for milli or 1meg for "
                        "mega");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_value_parse("1e400", &v, &err), SS_ERR_INPUT);
    assert_string_equal(err.message, "'1e400' is out of range");
}

/* ---- overrides: a name twice, a swept name also set -------------------------------------- */

static const char PARAM_NET[] = "divider\n.param rtop=10k\nv1 in 0 10\nr1 in mid {rtop}\n"
                                "r2 mid 0 10k\n";

static void test_set_twice_is_refused(void **state)
{
    (void)state;
    const ss_override twice_param[] = {{"rtop", "1k"}, {"RTOP", "2k"}};
    const ss_override twice_elem[] = {{"R2", "1k"}, {"r1", "3k"}, {"r2", "2k"}};
    ss_circuit *ckt = NULL;
    ss_error err = {0};
    assert_int_equal(ss_circuit_parse_text(PARAM_NET, strlen(PARAM_NET), "d.cir", twice_param,
                                           2, &ckt, &err),
                     SS_ERR_INPUT);
    assert_null(ckt);
    assert_string_equal(err.message, "--set RTOP: set twice (rtop=1k, then RTOP=2k)");
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_circuit_parse_text(PARAM_NET, strlen(PARAM_NET), "d.cir", twice_elem, 3,
                                           &ckt, &err),
                     SS_ERR_INPUT);
    assert_string_equal(err.message, "--set r2: set twice (R2=1k, then r2=2k)");
    /* once each is fine, and the --set value is the one in force */
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_circuit_parse_text(PARAM_NET, strlen(PARAM_NET), "d.cir", twice_elem, 2,
                                           &ckt, &err),
                     SS_OK);
    double v;
    assert_int_equal(ss_circuit_get_value(ckt, "r2", &v, &err), SS_OK);
    ss_assert_close(v, 1e3, 0.0, 0.0);
    ss_test_destroy(&ckt);
}

static void test_swept_name_cannot_also_be_set(void **state)
{
    (void)state;
    char path[] = "/tmp/ss_limits_names_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    assert_int_equal(write(fd, PARAM_NET, strlen(PARAM_NET)), (ssize_t)strlen(PARAM_NET));
    close(fd);
    const ss_override set[] = {{"RTOP", "5k"}};
    ss_study *s = NULL;
    ss_error err = {0};
    assert_int_equal(ss_study_create(path, set, 1, &s, &err), SS_OK);
    assert_int_equal(ss_study_add_vary(s, "rtop=list:1k,2k", &err), SS_ERR_INPUT);
    assert_string_equal(err.message,
                        "--vary rtop and --set RTOP name the same value: the swept value would "
                        "replace the --set one at every point; give one of them");
    /* a tolerance on it is fine: it spreads around the --set value */
    memset(&err, 0, sizeof err);
    assert_int_equal(ss_study_add_tolerance(s, "rtop=10%", &err), SS_OK);
    ss_study_destroy(&s);
    remove(path);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_names_match_figures_of_every_example),
        cmocka_unit_test(test_names_match_large_signal_figures),
        cmocka_unit_test(test_check_names_refuses_what_does_not_exist),
        cmocka_unit_test(test_check_names_accepts_every_kind),
        cmocka_unit_test(test_value_parse_accepts_numbers_with_si_suffixes),
        cmocka_unit_test(test_value_parse_refuses_the_rest),
        cmocka_unit_test(test_set_twice_is_refused),
        cmocka_unit_test(test_swept_name_cannot_also_be_set),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
