/* The netlist tokenizer (netlist_token_next), the one the parser and the fuzz harness share:
 * the field rules of docs/netlist.md (section 1, Lines: fields are separated by blanks or commas,
 * `=` may have spaces around it, a {...} expression is one field even with blanks in it) and
 * the (...) groups of source waveforms kept whole. */
#include "ss_test.h"

#include "netlist/netlist.h"

/* Splits text and compares the fields with want (NULL-terminated); returns what the last
 * non-END call reported. */
static netlist_token split(const char *text, const char *const *want)
{
    size_t pos = 0, start = 0, len = 0;
    netlist_token last = NETLIST_TOKEN_END, t;
    int i = 0;
    while ((t = netlist_token_next(text, &pos, &start, &len)) != NETLIST_TOKEN_END) {
        char field[256];
        assert_true(len < sizeof field);
        memcpy(field, text + start, len);
        field[len] = '\0';
        print_message("  [%d] '%s'\n", i, field);
        assert_non_null(want[i]);
        assert_string_equal(field, want[i]);
        assert_int_equal(pos, start + len);
        last = t;
        i++;
    }
    assert_null(want[i]);
    assert_int_equal(pos, strlen(text));
    return last;
}

static void test_blanks_and_commas_separate(void **state)
{
    (void)state;
    static const char *const want[] = {"r1", "in", "out", "1k", NULL};
    assert_int_equal(split("  r1 in,out\t, 1k  ", want), NETLIST_TOKEN_OK);
}

static void test_equals_is_a_field_of_its_own(void **state)
{
    (void)state;
    static const char *const want[] = {".param", "a", "=", "1", "b", "=", "2", "c", "=", "=",
                                       "d", NULL};
    assert_int_equal(split(".param a=1 b = 2 c==d", want), NETLIST_TOKEN_OK);
}

static void test_braces_and_parentheses_stay_whole(void **state)
{
    (void)state;
    static const char *const want[] = {"r1", "a", "b", "{2 * (x, y) = 1}", "v1", "sin(0 1, 1k)",
                                       NULL};
    /* past the closing brace a separator splits again */
    static const char *const want2[] = {"{a}", "=", "3", NULL};
    assert_int_equal(split("r1 a b {2 * (x, y) = 1} v1 sin(0 1, 1k)", want), NETLIST_TOKEN_OK);
    assert_int_equal(split("{a}=3", want2), NETLIST_TOKEN_OK);
}

static void test_unclosed_groups_run_to_the_end(void **state)
{
    (void)state;
    static const char *const brace[] = {"r1", "a", "b", "{1 + (2", NULL};
    static const char *const paren[] = {"v1", "sin(0 1 {k}", NULL};
    static const char *const both[] = {"x", "{(}", NULL};
    assert_int_equal(split("r1 a b {1 + (2", brace), NETLIST_TOKEN_OPEN_BRACE);
    assert_int_equal(split("v1 sin(0 1 {k}", paren), NETLIST_TOKEN_OPEN_PAREN);
    assert_int_equal(split("x {(}", both), NETLIST_TOKEN_OPEN_PAREN);
}

static void test_empty_line_has_no_field(void **state)
{
    (void)state;
    static const char *const none[] = {NULL};
    assert_int_equal(split("", none), NETLIST_TOKEN_END);
    assert_int_equal(split(" ,\t, ", none), NETLIST_TOKEN_END);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_blanks_and_commas_separate),
        cmocka_unit_test(test_equals_is_a_field_of_its_own),
        cmocka_unit_test(test_braces_and_parentheses_stay_whole),
        cmocka_unit_test(test_unclosed_groups_run_to_the_end),
        cmocka_unit_test(test_empty_line_has_no_field),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
