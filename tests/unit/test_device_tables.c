/* The device table is the one source of the model parameters: the tables docs/models.md prints
 * must be the ones the code holds (printed from them), and every kind's facts must hold
 * together. */
#include <stdlib.h>

#include "ss_test.h"

#include "devices/device.h"
#include "netlist/parser_internal.h"

/* The text between the marker line `<!-- parameters: NAME -->` and the next blank line. */
static char *doc_table(const char *doc, const char *name)
{
    char marker[128];
    snprintf(marker, sizeof marker, "<!-- parameters: %s -->\n", name);
    const char *p = strstr(doc, marker);
    if (!p)
        return NULL;
    p += strlen(marker);
    const char *end = strstr(p, "\n\n");
    size_t n = end ? (size_t)(end - p) + 1 : strlen(p);
    char *t = malloc(n + 1);
    memcpy(t, p, n);
    t[n] = '\0';
    return t;
}

static char *read_doc(void)
{
    FILE *f = fopen(SS_SOURCE_DIR "/docs/models.md", "rb");
    assert_non_null(f);
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *s = malloc((size_t)n + 1);
    assert_int_equal(fread(s, 1, (size_t)n, f), (size_t)n);
    s[n] = '\0';
    fclose(f);
    return s;
}

static void test_docs_print_the_parameter_tables(void **state)
{
    (void)state;
    char *doc = read_doc();
    int n_tables = 0;
    for (int k = 0; k < device_count(); k++) {
        const dev_ops *ops = device_at(k);
        if (!ops->model_params)
            continue;
        n_tables++;
        ss_strbuf want = {0};
        device_param_table_md(ops, &want);
        char *have = doc_table(doc, ops->kind_name);
        if (!have || strcmp(have, want.data) != 0) {
            print_error("docs/models.md: the table after <!-- parameters: %s --> should be:\n%s",
                        ops->kind_name, want.data);
            free(have);
            strbuf_clear(&want);
            free(doc);
            fail();
        }
        free(have);
        strbuf_clear(&want);
    }
    assert_true(n_tables >= 2);
    free(doc);
}

/* Every default lies in its own range; a corner parameter is positive; names are unique. */
static void test_parameter_tables_hold_together(void **state)
{
    (void)state;
    for (int k = 0; k < device_count(); k++) {
        const dev_ops *ops = device_at(k);
        for (int i = 0; i < ops->n_model_params; i++) {
            const dev_model_param *p = &ops->model_params[i];
            double v = p->def;
            int lo_ok = p->flags & DMP_MIN_OPEN ? v > p->min : v >= p->min;
            int hi_ok = p->flags & DMP_MAX_OPEN ? v < p->max : v <= p->max;
            if (isinf(v) && p->flags & DMP_ZERO_INF)
                hi_ok = lo_ok = 1;
            if (!lo_ok || !hi_ok) {
                print_error("%s: default %g of %s is outside its range\n", ops->kind_name, v,
                            p->name);
                fail();
            }
            assert_non_null(p->meaning);
            assert_non_null(p->unit);
            for (int j = 0; j < i; j++)
                assert_string_not_equal(ops->model_params[j].name, p->name);
        }
    }
}

/* The letters of the kinds are unique, and the facts agree with each other. */
static void test_kind_facts(void **state)
{
    (void)state;
    for (int k = 0; k < device_count(); k++) {
        const dev_ops *a = device_at(k);
        for (int j = 0; j < k; j++)
            assert_int_not_equal(a->letter, device_at(j)->letter);
        if (a->flags & DEV_DRIVES_CURRENT)
            assert_true(a->flags & DEV_SOURCE);
        if (a->report_line)
            assert_non_null(a->report_heading);
        for (int p = 0; p < a->n_dc_pairs; p++)
            assert_true(a->dc_pairs[p][0] != a->dc_pairs[p][1]);
        assert_ptr_equal(device_by_letter(a->letter), a);
    }
}

static void expect_error(const char *text, const char *want)
{
    char msg[1400];
    ss_test_parse_error(text, msg, sizeof msg);
    if (strcmp(msg, want) != 0) {
        print_error("got  %s\nwant %s\n", msg, want);
        fail();
    }
}

/* The card checks come from the tables' ranges: values the equations cannot take are refused
 * naming the model and the parameter (a grading coefficient of 1 divides the depletion charge
 * by zero; a negative KF would silently switch flicker noise off). */
static void test_card_ranges_come_from_the_tables(void **state)
{
    (void)state;
    expect_error("t\n.model q npn mje=1\nq1 c b 0 q\nv1 c 0 1\nv2 b 0 1\n",
                 "test.cir:2: model 'q': mje must be in [0, 1), got 1");
    expect_error("t\n.model q npn kf=-1e-16\nq1 c b 0 q\nv1 c 0 1\nv2 b 0 1\n",
                 "test.cir:2: model 'q': kf must not be negative, got -1e-16");
    expect_error("t\n.model q npn af=0\nq1 c b 0 q\nv1 c 0 1\nv2 b 0 1\n",
                 "test.cir:2: model 'q': af must be positive, got 0");
    expect_error("t\n.model dd d m=-0.1\nd1 a 0 dd\nv1 a 0 1\n",
                 "test.cir:2: model 'dd': m must be in [0, 1), got -0.1");
    expect_error("t\n.model dd d eg=0\nd1 a 0 dd\nv1 a 0 1\n",
                 "test.cir:2: model 'dd': eg must be positive, got 0");
    expect_error("t\n.model dd d tnom=-300\nd1 a 0 dd\nv1 a 0 1\n",
                 "test.cir:2: model 'dd': tnom -300 C is outside -273.15 .. 1000 C");
    /* the types and kinds named from the tables */
    expect_error("t\n.model x njx\n", "test.cir:2: model 'x': unknown type 'njx' (expected "
                                      "npn, pnp, njf, pjf, nmos, pmos or d)");
    expect_error("t\n.model p pnp\nd1 a 0 p\nv1 a 0 1\n",
                 "test.cir:3: d1: model 'p' is a pnp model; a diode needs a model of type d");
    expect_error("t\n.model q npn\nd1 a 0 q\nv1 a 0 1\n",
                 "test.cir:3: d1: model 'q' is an npn model; a diode needs a model of type d");
    /* the JFET's ranges and types come from its table too */
    expect_error("t\n.model j njf beta=0\nj1 d g 0 j\nv1 d 0 1\nv2 g 0 0\n",
                 "test.cir:2: model 'j': beta must be positive, got 0");
    expect_error("t\n.model j pjf fc=1\nj1 d g 0 j\nv1 d 0 1\nv2 g 0 0\n",
                 "test.cir:2: model 'j': fc must be in [0, 1), got 1");
    expect_error("t\n.model j njf lambda=-0.01\nj1 d g 0 j\nv1 d 0 1\nv2 g 0 0\n",
                 "test.cir:2: model 'j': lambda must not be negative, got -0.01");
    expect_error("t\n.model q npn\nj1 d g 0 q\nv1 d 0 1\nv2 g 0 0\n",
                 "test.cir:3: j1: model 'q' is an npn model; a JFET needs a model of type njf "
                 "or pjf");
}

/* The fields a card may carry beside its parameters under .options model_extras=warn
 * (docs/netlist.md) are none of any kind's parameters: a parameter is always read, never
 * ignored as a rating. */
static void test_extra_fields_are_no_parameters(void **state)
{
    (void)state;
    int n = 0;
    for (const char *f; (f = model_extra_field(n)) != NULL; n++)
        for (int k = 0; k < device_count(); k++)
            if (device_at(k)->model_params && model_param_index(device_at(k), f) >= 0) {
                print_error("'%s' is a %s parameter\n", f, device_at(k)->kind_name);
                fail();
            }
    assert_true(n >= 5);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_docs_print_the_parameter_tables),
        cmocka_unit_test(test_parameter_tables_hold_together),
        cmocka_unit_test(test_kind_facts),
        cmocka_unit_test(test_card_ranges_come_from_the_tables),
        cmocka_unit_test(test_extra_fields_are_no_parameters),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
