/* Test helpers shared by the cmocka unit tests: a double comparison that prints both values
 * in full (cmocka 1.1.5's assert_float_equal casts to float), and netlist/solve shortcuts. */
#ifndef SS_TEST_H
#define SS_TEST_H

#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "stagesim/stagesim.h"

/* |actual - expected| <= max(rel * |expected|, abs) */
#define ss_assert_close(actual, expected, rel, abs_)                                          \
    ss_assert_close_impl((actual), (expected), (rel), (abs_), #actual, __FILE__, __LINE__)

static inline void ss_assert_close_impl(double actual, double expected, double rel, double abs_,
                                        const char *what, const char *file, int line)
{
    double tol = fmax(rel * fabs(expected), abs_);
    if (!(fabs(actual - expected) <= tol)) {
        print_error("%s:%d: %s = %.17g, expected %.17g (tolerance %.3g)\n", file, line, what,
                    actual, expected, tol);
        _fail(file, line);
    }
}

/* The solver context of a test circuit: made on first use, kept beside the circuit and
 * destroyed with it by ss_test_destroy (the tests solve through one context per circuit, as
 * the command-line tool does). */
#define SS_TEST_MAX_CONTEXTS 64
static struct ss_test_pair {
    const ss_circuit *ckt;
    ss_solver *sv;
} ss_test_pairs[SS_TEST_MAX_CONTEXTS];

static inline ss_solver *ss_test_sv(const ss_circuit *ckt)
{
    int free_slot = -1;
    for (int i = 0; i < SS_TEST_MAX_CONTEXTS; i++) {
        if (ss_test_pairs[i].ckt == ckt && ckt)
            return ss_test_pairs[i].sv;
        if (!ss_test_pairs[i].ckt && free_slot < 0)
            free_slot = i;
    }
    ss_error err;
    memset(&err, 0, sizeof err);
    ss_solver *sv = NULL;
    if (free_slot < 0 || ss_solver_create(ckt, &sv, &err) != SS_OK) {
        print_error("no context: %s\n", err.message);
        fail();
    }
    ss_test_pairs[free_slot].ckt = ckt;
    ss_test_pairs[free_slot].sv = sv;
    return sv;
}

/* Destroys the circuit and its context (if one was made). */
static inline void ss_test_destroy(ss_circuit **ckt)
{
    for (int i = 0; ckt && *ckt && i < SS_TEST_MAX_CONTEXTS; i++)
        if (ss_test_pairs[i].ckt == *ckt) {
            ss_solver_destroy(&ss_test_pairs[i].sv);
            ss_test_pairs[i].ckt = NULL;
        }
    ss_circuit_destroy(ckt);
}

/* Parses text; fails the test with the formatted error when parsing fails. */
static inline ss_circuit *ss_test_parse(const char *text)
{
    ss_circuit *ckt = NULL;
    ss_error err;
    memset(&err, 0, sizeof err);
    if (ss_circuit_parse_text(text, strlen(text), "test.cir", NULL, 0, &ckt, &err) != SS_OK) {
        char msg[1400];
        ss_error_format(&err, msg, sizeof msg);
        print_error("parse failed: %s\n", msg);
        fail();
    }
    return ckt;
}

/* Parses text and expects failure; returns the formatted message in buf. */
static inline ss_status ss_test_parse_error(const char *text, char *buf, size_t len)
{
    ss_circuit *ckt = NULL;
    ss_error err;
    memset(&err, 0, sizeof err);
    ss_status st = ss_circuit_parse_text(text, strlen(text), "test.cir", NULL, 0, &ckt, &err);
    if (st == SS_OK) {
        ss_circuit_destroy(&ckt);
        print_error("parse unexpectedly succeeded\n");
        fail();
    }
    ss_error_format(&err, buf, len);
    return st;
}

/* Parses and solves the operating point; returns the op table (caller destroys both). */
static inline ss_table *ss_test_op(const char *text, ss_circuit **out_ckt)
{
    ss_circuit *ckt = ss_test_parse(text);
    ss_table *op = NULL;
    ss_error err;
    memset(&err, 0, sizeof err);
    if (ss_op_solve(ss_test_sv(ckt), &op, NULL, &err) != SS_OK) {
        char msg[1400];
        ss_error_format(&err, msg, sizeof msg);
        print_error("op failed: %s\n", msg);
        ss_test_destroy(&ckt);
        fail();
    }
    *out_ckt = ckt;
    return op;
}

static inline double ss_test_opval(const ss_table *op, const char *label)
{
    double v = ss_table_lookup(op, label, 0);
    if (isnan(v)) {
        print_error("no row '%s' in op table\n", label);
        fail();
    }
    return v;
}

#define ss_assert_contains(haystack, needle)                                                  \
    do {                                                                                       \
        if (!strstr((haystack), (needle))) {                                                   \
            print_error("'%s' does not contain '%s'\n", (haystack), (needle));                 \
            fail();                                                                            \
        }                                                                                      \
    } while (0)

#endif
