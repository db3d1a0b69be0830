/* What the netlist parser's files share: the parser's state, logical lines, scopes and the
 * helpers one file offers the others. Internal to src/netlist; devices use netlist.h's pctx_. */
#ifndef SS_PARSER_INTERNAL_H
#define SS_PARSER_INTERNAL_H

#include <string.h>

#include "netlist/circuit.h"
#include "netlist/netlist.h"

/* directives known to directives.c (its table has at most this many entries) */
#define DIRECTIVE_MAX 24

/* ---- state ------------------------------------------------------------------------------- */

typedef struct logline {
    const char *file;
    int line;
    char **tok;
    int n_tok;
} logline;

typedef struct param_def {
    const char *name;
    const char *text; /* expression text */
    const char *file;
    int line;
    double value;
    int state; /* 0 not evaluated, 1 being evaluated, 2 done */
    int from_set; /* the text came from a --set override */
} param_def;

typedef struct subckt_def {
    const char *name;
    const char **ports;
    int n_ports;
    const char **pnames; /* parameter names with defaults */
    const char **ptexts;
    int n_params;
    int body_first, body_end; /* logical line range of the body */
    const char *file;
    int line;
    /* what one instance expands to, counted once (subckt_expansion): elements, instances and
     * the nesting levels below it */
    double n_elem, n_inst;
    int height;
    int counted;
} subckt_def;

typedef struct scope {
    const struct scope *parent;
    const char *prefix; /* "" at top level, "x1." inside X1 */
    int prefix_len;
    const char **port_names;
    const int *port_nodes;
    unsigned char *port_used; /* set when an element of the body (or of an instance in it)
                               * connects to the port */
    int n_ports;
    const char **pnames;
    double *pvals;
    int n_params;
    int depth;
    int tape_id; /* its scope on the expression tape; -1 the top level */
} scope;

/* A node an X line brought in through a port its subcircuit leaves unconnected: an error after
 * parsing if no element connects to the node either. */
typedef struct port_note {
    int node;
    const logline *at;   /* the X line */
    const char *prefix;  /* the instance's full name and a '.' */
    const char *subckt, *port;
} port_note;

typedef struct parser {
    ss_circuit *ckt;
    ss_error *err;
    logline *lines;
    int n_lines, cap_lines;
    const char *inc_stack[NETLIST_MAX_INCLUDE_DEPTH + 1];
    int inc_depth;
    param_def *params;
    int n_params, cap_params;
    ss_strmap param_map;
    subckt_def *subckts;
    int n_subckts, cap_subckts;
    ss_strmap subckt_map;
    ss_arena scratch; /* parse-lifetime data (token arrays), freed with the parser */
    const ss_override *overrides;
    int n_overrides;
    /* folders searched, in order, for a relative .include not found beside its file */
    const char *const *model_dirs;
    int n_model_dirs;
    unsigned char *override_used;
    size_t text_bytes; /* netlist text read so far, all files together */
    /* per node, the length of the instance prefix it was named with (0 at the top level):
     * `x1.mid` written at the top level and node `mid` inside X1 are two nodes spelled the
     * same, found by their differing prefixes */
    unsigned short *node_plen;
    size_t cap_node_plen;
    ss_strmap inst_map; /* instance prefix ("x1.", "x1.x2.") -> its X line's index */
    int n_instances;    /* subcircuit instances built so far */
    port_note *notes;
    int n_notes, cap_notes;
    /* per directive (directives.c's table), the line it was first given on */
    const logline *directive_first[DIRECTIVE_MAX];
    /* .options names given so far (each once), with their lines */
    const char *opt_name[32];
    const logline *opt_at[32];
    int n_opt;
    int nomem;
    int expr_depth; /* expression nesting, shared by the parameters an expression refers to */
    /* the model and parameter a value being read belongs to (models.c), -1 when none;
     * TAPE_HINT_STAGE_LOAD while .stage load= is read */
    int tape_model, tape_param;
    int model_extras_warn; /* .options model_extras=warn (read before the model cards) */
} parser;

struct pctx {
    parser *ps;
    const logline *ll;
    const scope *sc;
    const char *elem_name;
};

/* ---- parser.c: errors and the passes ----------------------------------------------------- */

/* Records "out of memory while parsing"; returns SS_ERR_NOMEM. */
SS_HIDDEN ss_status nomem(parser *ps);
/* Records "FILE:LINE: message" at ll (the netlist itself when ll is NULL); returns
 * SS_ERR_INPUT. */
SS_HIDDEN ss_status line_error(parser *ps, const logline *ll, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
static inline int is_directive(const logline *ll, const char *d)
{
    return strcmp(ll->tok[0], d) == 0;
}
/* Pass 2 over lines [first, end) in scope sc: elements, X instances, directives. */
SS_HIDDEN ss_status build_lines(parser *ps, const scope *sc, int first, int end);

/* ---- reader.c: files, .include, logical lines, tokens ------------------------------------ */

/* Splits one logical line into ll's tokens (strings in the circuit's arena). */
SS_HIDDEN ss_status tokenize(parser *ps, logline *ll, char *text);
/* Reads the netlist file (from NULL, is_top 1) or an included one (from: the .include line). */
SS_HIDDEN ss_status read_file(parser *ps, const char *path, const logline *from, int is_top);
SS_HIDDEN ss_status read_text(parser *ps, const char *text, size_t len, const char *file,
                              int is_top);

/* ---- params.c: parameters and values ----------------------------------------------------- */

/* Evaluates an expression text in a scope (NULL: the globals only); {braces} optional. 0 ok,
 * -1 with a message in msg. */
SS_HIDDEN int eval_text(parser *ps, const scope *sc, const char *text, double *out, char *msg,
                        size_t msg_len);
/* Evaluates global parameter idx once (later calls return the value kept); 0 ok, -1 with the
 * error recorded at its .param line (or its --set) and the reason in msg. */
SS_HIDDEN int eval_global_param(parser *ps, int idx, char *msg, size_t msg_len);
/* A value token on a line: number with suffix, or {expr}; 0 ok, -1 with the error set naming
 * owner (may be NULL) and what. */
SS_HIDDEN int line_value(parser *ps, const logline *ll, const scope *sc, const char *tok,
                         const char *owner, const char *what, double *out);
/* Tokens [from, to) joined with single spaces, in the circuit's arena; NULL out of memory. */
SS_HIDDEN const char *join_tokens(parser *ps, const logline *ll, int from, int to);
/* Called with each name and value text of a `name = value` list; 0 ok, -1 with the error set. */
typedef int (*assign_fn)(parser *ps, const logline *ll, void *ctx, const char *name,
                         const char *text);
/* Parses `name = value` pairs from token `from`; 0 ok, -1 with the error set. */
SS_HIDDEN int parse_assignments(parser *ps, const logline *ll, int from, assign_fn fn, void *ctx);
/* An assign_fn for .param lines at the top level (ctx unused). */
SS_HIDDEN int add_global_param(parser *ps, const logline *ll, void *ctx, const char *name,
                               const char *text);
/* Before reading: a --set NAME given twice is refused. */
SS_HIDDEN ss_status check_overrides_once(parser *ps);
/* After building: the --set overrides no .param took, applied to elements and model
 * parameters. */
SS_HIDDEN ss_status apply_late_overrides(parser *ps);

/* ---- tape.c: the expression tape (circuit.h) --------------------------------------------- */

#define TAPE_HINT_STAGE_LOAD (-2)
/* A new scope on the tape; its id, or -1 out of memory (set). */
SS_HIDDEN int tape_new_scope(parser *ps);
/* Appends te; 0 ok, -1 out of memory (set). */
SS_HIDDEN int tape_record(parser *ps, const tape_entry *te);
/* Parameter `name` of scope `id`, given by `text` evaluated in eval_scope (-1 globals). */
SS_HIDDEN int tape_scope_param(parser *ps, const logline *ll, int id, const char *name,
                               const char *text, int eval_scope);
/* An {expression} value just evaluated into *out at line ll in scope sc: where it went (the
 * element being read, the model parameter being read, or a fixed setting). */
SS_HIDDEN int tape_value(parser *ps, const logline *ll, const scope *sc, const char *text,
                         double *out);

/* ---- pctx.c: names and nodes ------------------------------------------------------------- */

static inline int is_ground_name(const char *t)
{
    return strcmp(t, "0") == 0 || strcmp(t, "gnd") == 0;
}

/* Hierarchical names (subcircuit prefix + local name) are built in buffers of this size. A
 * longer one is an error, never cut short: two names cut to the same text would silently merge
 * two nodes (or confuse two elements). */
#define SCOPED_NAME_BYTES 1024

/* Writes prefix + tok + suffix into buf[SCOPED_NAME_BYTES]; 0 ok, -1 with the error set
 * (naming `who` at line ll) when the name does not fit. */
SS_HIDDEN int scoped_name(parser *ps, const logline *ll, const char *who, char *buf,
                          const char *prefix, const char *tok, const char *suffix);

/* The first character of a node, model or subcircuit name: a letter, a digit, '_' or a byte of
 * a UTF-8 character (>= 0x80). Punctuation is refused: names end up in CSV headers and labels,
 * where a cell starting with '=', '+', '-' or '@' is a formula to a spreadsheet. */
#define NAME_START_RULE "a name starts with a letter, a digit or '_'"
static inline int name_start_ok(const char *t)
{
    unsigned char c = (unsigned char)t[0];
    return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') ||
           c == '_' || c >= 0x80;
}

/* Parameter names are what expressions can refer to: ASCII letter or '_' first. */
#define PARAM_NAME_RULE "a parameter name starts with a letter or '_'"
static inline int param_name_ok(const char *t)
{
    unsigned char c = (unsigned char)t[0];
    return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || c == '_';
}

#define NODE_NAME_RULE NAME_START_RULE " and holds no '=', braces, parentheses or '\"'"
static inline int valid_node_name(const char *t)
{
    if (!*t)
        return 0;
    for (; *t; t++)
        if (*t == '=' || *t == '{' || *t == '}' || *t == '(' || *t == ')' || *t == '"')
            return 0;
    return 1;
}

/* Records the prefix length a new node was named with. 0 ok, -1 out of memory (set). */
SS_HIDDEN int note_node_prefix(parser *ps, int idx, int prefix_len);
/* The node for tok in p's scope; *port gets the index of the scope's port it names, or -1. */
SS_HIDDEN int scope_node(pctx *p, const char *tok, int *port);

/* ---- models.c ---------------------------------------------------------------------------- */

/* A .model line: the card checked and added to the circuit; 0 ok, -1 with the error set. */
SS_HIDDEN int define_model(parser *ps, const logline *ll);
/* Checks the physical ranges the equations need; 0 ok, -1 with the error set at ll. */
SS_HIDDEN int check_model(parser *ps, const logline *ll, const model *m);
/* Reads `.options model_extras=` from every .options line before the cards are defined; 0 ok,
 * -1 with the error set (a value other than error or warn). */
SS_HIDDEN int model_extras_prescan(parser *ps);
/* The fields that are no model parameter yet are accepted under model_extras=warn, in order;
 * NULL past the end. */
SS_HIDDEN const char *model_extra_field(int k);
/* Edits (insert, delete, replace, swap two neighbours) from a to b, counted up to 9. */
SS_HIDDEN int name_distance(const char *a, const char *b);

/* ---- subckt.c: subcircuits --------------------------------------------------------------- */

/* A .subckt line into sd: name, ports, parameter defaults; 0 ok, -1 with the error set. */
SS_HIDDEN int collect_subckt_header(parser *ps, const logline *ll, subckt_def *sd);
/* An X line in scope sc: the instance's body built with its ports and parameters. */
SS_HIDDEN ss_status expand_instance(parser *ps, const logline *ll, const scope *sc);
/* After building: a node brought in only through ports no element uses is refused. */
SS_HIDDEN ss_status check_unused_ports(parser *ps);

/* ---- directives.c: directives and the checks after parsing ------------------------------- */

/* A dot line met in pass 2 in scope sc. */
SS_HIDDEN ss_status directive(parser *ps, const logline *ll, const scope *sc);
SS_HIDDEN ss_status check_dc_sources(parser *ps);
SS_HIDDEN ss_status check_noise(parser *ps);
SS_HIDDEN ss_status check_waves(parser *ps);
SS_HIDDEN ss_status check_stage(parser *ps);

#endif
