/* The draft library (include/stagesim/draft.h): kinds by name, the requirements' defaults,
 * errors that begin with the requirement's name, every chosen part on its IEC 60063 series,
 * a netlist the parser reads, the file written as the text, and every allocation failure
 * ending cleanly. The rules' numbers are checked end to end against hand designs in
 * tests/cli/test_draft.py. */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "ss_test.h"
#include "stagesim/stagesim.h"
#include "util/util.h"

static void test_kind_names(void **state)
{
    (void)state;
    for (int k = 0; k < SS_DRAFT_N_KINDS; k++)
        assert_int_equal(ss_draft_kind_parse(ss_draft_kind_name(k)), k);
    assert_int_equal(ss_draft_kind_parse("cascode"), -1);
    assert_int_equal(ss_draft_kind_parse(NULL), -1);
    assert_null(ss_draft_kind_name(-1));
    assert_null(ss_draft_kind_name(SS_DRAFT_N_KINDS));
    ss_draft_req q;
    ss_draft_req_init(&q, SS_DRAFT_CE);
    assert_true(isnan(q.supply_v) && isnan(q.gain) && isnan(q.load_ohm) && isnan(q.f_low_hz));
    assert_int_equal(q.series, 24);
    assert_int_equal(q.cap_series, 12);
}

/* err's message begins with field and a colon */
static void expect_error(const ss_draft_req *q, const char *field)
{
    ss_error err = {0};
    ss_draft *d = (ss_draft *)&err; /* must come back NULL */
    assert_int_equal(ss_draft_create(q, &d, &err), SS_ERR_INPUT);
    assert_null(d);
    size_t n = strlen(field);
    if (strncmp(err.message, field, n) != 0 || err.message[n] != ':')
        fail_msg("expected '%s: ...', got '%s'", field, err.message);
}

static void test_errors_name_the_requirement(void **state)
{
    (void)state;
    ss_draft_req q;
    ss_draft_req_init(&q, SS_DRAFT_CE);
    q.supply_v = 0.0;
    expect_error(&q, "supply");
    q.supply_v = SS_NAN;
    q.current_a = -1e-3;
    expect_error(&q, "current");
    q.current_a = HUGE_VAL;
    expect_error(&q, "current");
    q.current_a = SS_NAN;
    q.series = 7;
    expect_error(&q, "series");
    q.series = 24;
    q.cap_series = 0;
    expect_error(&q, "cap-series");
    q.cap_series = 12;
    q.f_low_hz = 1e3;
    q.f_high_hz = 1e2;
    expect_error(&q, "f-high");
    ss_draft_req_init(&q, SS_DRAFT_FOLLOWER);
    q.gain = 2.0;
    expect_error(&q, "gain");
    ss_draft_req_init(&q, SS_DRAFT_CE_SPLIT);
    expect_error(&q, "gain"); /* ce-split needs one */
    ss_draft_req_init(&q, SS_DRAFT_JFET_CS);
    q.current_a = 10e-3;
    expect_error(&q, "current");
    ss_draft_req_init(&q, SS_DRAFT_CE);
    q.swing_v = 6.0; /* half of the default 12 V */
    expect_error(&q, "swing");
    q.kind = (ss_draft_kind)99;
    q.swing_v = SS_NAN;
    expect_error(&q, "kind");
    ss_error err = {0};
    ss_draft *d = NULL;
    assert_int_equal(ss_draft_create(NULL, &d, &err), SS_ERR_INPUT);
    /* the accessors take NULL */
    assert_null(ss_draft_netlist(NULL));
    assert_int_equal(ss_draft_warning_count(NULL), 0);
    assert_int_equal(ss_draft_part(NULL, 0, NULL, NULL, NULL, NULL), -1);
    ss_draft_destroy(NULL);
}

static ss_draft_req sample(int kind)
{
    ss_draft_req q;
    ss_draft_req_init(&q, (ss_draft_kind)kind);
    q.source_ohm = 600.0;
    q.load_ohm = 10e3;
    if (kind != SS_DRAFT_FOLLOWER && kind != SS_DRAFT_CE)
        q.gain = 10.0;
    return q;
}

static void test_every_kind_reads_and_is_on_series(void **state)
{
    (void)state;
    for (int k = 0; k < SS_DRAFT_N_KINDS; k++) {
        ss_draft_req q = sample(k);
        ss_error err = {0};
        ss_draft *d = NULL;
        if (ss_draft_create(&q, &d, &err) != SS_OK)
            fail_msg("%s: %s", ss_draft_kind_name(k), err.message);
        const char *text = ss_draft_netlist(d);
        ss_circuit *ckt = NULL;
        if (ss_circuit_parse_text(text, strlen(text), "draft.cir", NULL, 0, &ckt, &err) != SS_OK)
            fail_msg("%s: the netlist does not read: %s", ss_draft_kind_name(k), err.message);
        ss_circuit_destroy(&ckt);
        assert_true(ss_draft_part_count(d) >= 5);
        for (int i = 0; i < ss_draft_part_count(d); i++) {
            const char *name, *written, *what;
            double v, snapped;
            assert_int_equal(ss_draft_part(d, i, &name, &v, &written, &what), 0);
            int series = name[0] == 'C' ? 12 : 24;
            assert_int_equal(ss_eseries_nearest(series, v, &snapped, &err), SS_OK);
            if (fabs(snapped / v - 1.0) > 1e-9)
                fail_msg("%s %s = %g is not on E%d", ss_draft_kind_name(k), name, v, series);
            double back;
            assert_int_equal(ss_value_parse(written, &back, &err), SS_OK);
            ss_assert_close(back, v, 1e-12, 0.0);
            assert_non_null(strstr(text, written));
        }
        assert_int_equal(ss_draft_part(d, ss_draft_part_count(d), NULL, NULL, NULL, NULL), -1);
        assert_null(ss_draft_warning(d, ss_draft_warning_count(d)));
        ss_draft_destroy(d);
    }
}

static void test_write_is_the_text(void **state)
{
    (void)state;
    ss_draft_req q = sample(SS_DRAFT_CE_SPLIT);
    ss_error err = {0};
    ss_draft *d = NULL;
    assert_int_equal(ss_draft_create(&q, &d, &err), SS_OK);
    char path[] = "ss_draft_unit_XXXXXX"; /* in the test's working folder */
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    close(fd);
    assert_int_equal(ss_draft_write(d, path, &err), SS_OK);
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    static char buf[1 << 16];
    size_t n = fread(buf, 1, sizeof buf - 1, f);
    fclose(f);
    buf[n] = '\0';
    remove(path);
    assert_string_equal(buf, ss_draft_netlist(d));
    assert_int_equal(ss_draft_write(d, "no-such-folder/x/draft.cir", &err), SS_ERR_IO);
    ss_draft_destroy(d);
}

static void test_every_allocation_failure_is_clean(void **state)
{
    (void)state;
    for (int k = 0; k < SS_DRAFT_N_KINDS; k++) {
        ss_draft_req q = sample(k);
        long n;
        int nomem = 0;
        for (n = 0; n < 10000; n++) {
            ss_error err = {0};
            ss_draft *d = NULL;
            ss_alloc_fail_at(n);
            ss_status s = ss_draft_create(&q, &d, &err);
            ss_alloc_fail_at(-1);
            if (s == SS_OK) {
                ss_draft_destroy(d);
                break;
            }
            assert_int_equal(s, SS_ERR_NOMEM);
            assert_null(d);
            nomem++;
        }
        assert_true(nomem > 3);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_kind_names),
        cmocka_unit_test(test_errors_name_the_requirement),
        cmocka_unit_test(test_every_kind_reads_and_is_on_series),
        cmocka_unit_test(test_write_is_the_text),
        cmocka_unit_test(test_every_allocation_failure_is_clean),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
