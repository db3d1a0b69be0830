/* Netlist module: values, expressions, logical lines and tokens, and the parser that builds a
 * circuit. Device-specific syntax is parsed by each device's ops table through the pctx_ API. */
#ifndef SS_NETLIST_H
#define SS_NETLIST_H

#include <stddef.h>

#include "util/util.h"

/* ---- limits (documented in docs/netlist.md) ---------------------------------------------- */
#define EXPR_MAX_DEPTH 200
#define EXPR_MAX_DEPTH_TEXT "200"
#define EXPR_MAX_NAME 128
#define NETLIST_MAX_INCLUDE_DEPTH 16
#define NETLIST_MAX_SUBCKT_DEPTH 32
#define NETLIST_MAX_LINE_BYTES (1u << 20)
#define NETLIST_MAX_TOKENS 4096
#define NETLIST_MAX_ELEMENTS 10000000
/* netlist text, the top-level file and its includes together */
#define NETLIST_MAX_TEXT_BYTES ((size_t)1 << 30)
#define NETLIST_MAX_TEXT_TEXT "1 GiB"

/* ---- tokens ------------------------------------------------------------------------------ */
/* How a logical line is split into fields: whitespace and commas separate, '=' is a field of its
 * own, {...} and (...) stay whole (a ',', '=' or blank inside them does not split). */
typedef enum netlist_token {
    NETLIST_TOKEN_END,        /* no field left on the line */
    NETLIST_TOKEN_OK,         /* a field */
    NETLIST_TOKEN_OPEN_BRACE, /* a field with a '{' never closed: it runs to the end of the line */
    NETLIST_TOKEN_OPEN_PAREN, /* the same with a '(' (an open brace is reported first) */
} netlist_token;
/* Finds the field at or after text[*pos]: its offset into *start and its length into *len,
 * and moves *pos past it. At the end of the text only *pos moves. */
SS_HIDDEN netlist_token netlist_token_next(const char *text, size_t *pos, size_t *start,
                                           size_t *len);

/* ---- values ------------------------------------------------------------------------------ */
/* Scans a number with optional SI suffix and unit letters at s; returns the characters used
 * (0: no number there) and writes *out. */
SS_HIDDEN size_t value_scan(const char *s, double *out);
SS_HIDDEN size_t value_number_len(const char *s);
/* The whole text must be one finite value. 0 ok, -1 bad. */
SS_HIDDEN int value_parse(const char *text, double *out);
/* Power of ten of the SI suffix on a value token: -3 for `68m` (milli, however it was written:
 * netlists are read in lower case), -15 for `1f`, 6 for `1meg`; 0 for no suffix, `mil` or
 * anything that is not a number (an {expression}). */
SS_HIDDEN int value_si_exp(const char *tok);
SS_HIDDEN int strncasecmp_ascii(const char *a, const char *b, size_t n);
/* 1 when equal ignoring ASCII case */
SS_HIDDEN int strcasecmp_ascii_eq(const char *a, const char *b);

/* ---- expressions ------------------------------------------------------------------------- */
/* Resolves a (lower-case) name; 0 ok, else -1 with a message in msg. */
typedef int (*expr_lookup_fn)(void *ctx, const char *name, double *out, char *msg,
                              size_t msg_len);
/* Evaluates text (no braces). 0 ok with *out written; -1 with a message. */
SS_HIDDEN int expr_eval(const char *text, expr_lookup_fn lookup, void *ctx, double *out,
                        char *msg, size_t msg_len);
/* As expr_eval, continuing the nesting count *depth of an enclosing evaluation (a parameter
 * evaluated because an expression refers to it), so a chain of parameters shares the one
 * EXPR_MAX_DEPTH budget and cannot exhaust the stack. *depth is as it was on return. */
SS_HIDDEN int expr_eval_nested(const char *text, int *depth, expr_lookup_fn lookup, void *ctx,
                               double *out, char *msg, size_t msg_len);
/* expr_eval_nested of a value as written: an expression with or without its {braces}. */
SS_HIDDEN int expr_eval_value(const char *text, int *depth, expr_lookup_fn lookup, void *ctx,
                              double *out, char *msg, size_t msg_len);

/* ---- device-facing parse API ------------------------------------------------------------- */
typedef struct pctx pctx; /* the parser's state for one element line */
struct element;
struct model;
struct dev_ops;

/* Token i of the element line (0 is the element name), NULL past the end. */
SS_HIDDEN const char *pctx_tok(const pctx *p, int i);
SS_HIDDEN int pctx_ntok(const pctx *p);
/* Node index for a node token (created on first use; 0 is ground); -1 on error (set). */
SS_HIDDEN int pctx_node(pctx *p, const char *tok);
/* A value token: number with suffix or {expr}. 0 ok; -1 with the error set naming `what`. */
SS_HIDDEN int pctx_value(pctx *p, const char *tok, const char *what, double *out);
/* 1 when a model of that name exists (any type). */
SS_HIDDEN int pctx_is_model(const pctx *p, const char *name);
/* The model called name, which must be one of the kind ops (its .model type among
 * ops->model_types); NULL with the error set otherwise. */
SS_HIDDEN const struct model *pctx_model(pctx *p, const char *name, const struct dev_ops *ops);
/* Records "FILE:LINE: ELEMENT: message"; returns -1. */
SS_HIDDEN int pctx_error(pctx *p, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* The hierarchical (subcircuit-prefixed, lower-case) name of an element named on the line. */
SS_HIDDEN const char *pctx_scoped_name(pctx *p, const char *tok);
/* Keeps a string for the circuit's lifetime. */
SS_HIDDEN const char *pctx_strdup(pctx *p, const char *s);
/* Zeroed memory for the circuit's lifetime (its arena); NULL with the error set. */
SS_HIDDEN void *pctx_alloc(pctx *p, size_t size);

#endif
