/* libFuzzer harness: netlist text -> parse -> operating point -> .ac / stage / noise / .dc ->
 * CSV, report and plot writers, everything destroyed. Work limits keep each input fast; what is
 * under test is the library never crashing, leaking or misreporting (docs/fuzzing.md). */
#define _DEFAULT_SOURCE /* mkdtemp */
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "stagesim/stagesim.h"

#include "analysis/analysis.h"
#include "netlist/circuit.h"
#include "netlist/netlist.h"
#include "util/table.h"
#include "util/util.h"

/* ---- work limits of the harness (not of the library; docs/fuzzing.md) ------------------- */
/* Inputs longer than this are skipped (the campaigns run with -max_len=4096 anyway). */
#define FUZZ_MAX_INPUT_BYTES 65536u
/* Netlist lines after subcircuit expansion, estimated from the text before parsing: nested
 * X instances multiply (8 levels of 10 instances is 10^8 elements), which is slow, not wrong. */
#define FUZZ_MAX_EXPANDED_LINES 20000L
/* Analyses run only on circuits up to this size ... */
#define FUZZ_MAX_ANALYSIS_ELEMENTS 300
#define FUZZ_MAX_ANALYSIS_NODES 600
/* ... with at most this Newton iteration limit (the default is 150; up to 100000 allowed) ... */
#define FUZZ_MAX_NEWTON_ITERS 300
/* ... and sweeps of at most this many points. */
#define FUZZ_MAX_AC_POINTS 200
#define FUZZ_MAX_DC_POINTS 60

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* A broken promise of the library: stop loudly so the fuzzer (or the replay test) sees it. */
#define FUZZ_CHECK(cond, what)                                                                 \
    do {                                                                                       \
        if (!(cond)) {                                                                         \
            fprintf(stderr, "fuzz_netlist: %s (%s:%d)\n", what, __FILE__, __LINE__);           \
            abort();                                                                           \
        }                                                                                      \
    } while (0)

/* ---- a cheap estimate of the parse work, before parsing --------------------------------- */

typedef struct fz_tok {
    const char *s;
    size_t n;
} fz_tok;

typedef struct fz_line {
    fz_tok *tok;
    int n_tok;
} fz_line;

typedef struct fz_scan {
    char *text; /* lower-cased logical lines, NUL-separated */
    fz_line *lines;
    int n_lines;
    fz_tok *toks;
    int n_toks, cap_toks;
    int *sub_line; /* .subckt header line of each subcircuit */
    int *sub_end;  /* its .ends line (or n_lines) */
    int n_subs;
    long *memo; /* cost per (subcircuit, depth), -1 unknown */
} fz_scan;

static int tok_is(const fz_tok *t, const char *s)
{
    size_t n = strlen(s);
    return t->n == n && memcmp(t->s, s, n) == 0;
}

/* The line's tokens, split by the parser's own tokenizer (an unclosed brace or parenthesis,
 * which the parser refuses, is kept as a token). */
static int scan_tokenize(fz_scan *sc, const char *s)
{
    size_t pos = 0, start, len;
    while (netlist_token_next(s, &pos, &start, &len) != NETLIST_TOKEN_END) {
        if (sc->n_toks == sc->cap_toks) {
            int ncap = sc->cap_toks ? 2 * sc->cap_toks : 1024;
            fz_tok *nt = realloc(sc->toks, (size_t)ncap * sizeof *nt);
            if (!nt)
                return -1;
            sc->toks = nt;
            sc->cap_toks = ncap;
        }
        sc->toks[sc->n_toks].s = s + start;
        sc->toks[sc->n_toks].n = len;
        sc->n_toks++;
    }
    return 0;
}

/* Splits the text into logical lines as read_text does: title skipped, ';' and CR end the
 * useful part, '*' lines and blank lines dropped, '+' lines continue the previous one. */
static int scan_lines(fz_scan *sc, const char *text, size_t len)
{
    /* a logical line is at most its bytes plus one space per continuation */
    sc->text = malloc(2 * len + 2);
    size_t *starts = malloc((len / 2 + 2) * sizeof *starts);
    int *first_tok = malloc((len / 2 + 2) * sizeof *first_tok);
    if (!sc->text || !starts || !first_tok)
        goto fail;
    size_t out = 0, pos = 0;
    int line_no = 0, open = 0, n_logical = 0;
    while (pos < len) {
        size_t end = pos;
        while (end < len && text[end] != '\n')
            end++;
        const char *l = text + pos;
        size_t n = end - pos;
        pos = end + 1;
        if (++line_no == 1)
            continue; /* the title */
        size_t keep = 0;
        while (keep < n && l[keep] != ';' && l[keep] != '\r')
            keep++;
        size_t first = 0;
        while (first < keep && (l[first] == ' ' || l[first] == '\t' || l[first] == '\v' ||
                                l[first] == '\f'))
            first++;
        if (first == keep || l[first] == '*')
            continue;
        if (l[first] == '+') {
            if (!open)
                continue; /* the parser rejects it */
            sc->text[out++] = ' ';
            first++;
        } else {
            if (open)
                sc->text[out++] = '\0';
            starts[n_logical++] = out;
            open = 1;
        }
        for (size_t i = first; i < keep; i++) {
            char c = l[i];
            sc->text[out++] = (c >= 'A' && c <= 'Z') ? (char)(c + 32) : c;
        }
    }
    sc->text[out] = '\0';
    sc->lines = calloc((size_t)(n_logical ? n_logical : 1), sizeof *sc->lines);
    if (!sc->lines)
        goto fail;
    /* tokens of every line first (the array moves as it grows), then the line views */
    for (int i = 0; i < n_logical; i++) {
        first_tok[i] = sc->n_toks;
        if (scan_tokenize(sc, sc->text + starts[i]) != 0)
            goto fail;
        sc->lines[i].n_tok = sc->n_toks - first_tok[i];
    }
    int kept = 0;
    for (int i = 0; i < n_logical; i++) {
        if (sc->lines[i].n_tok == 0)
            continue;
        sc->lines[kept].tok = sc->toks + first_tok[i];
        sc->lines[kept].n_tok = sc->lines[i].n_tok;
        kept++;
    }
    sc->n_lines = kept;
    free(starts);
    free(first_tok);
    return 0;
fail:
    free(starts);
    free(first_tok);
    return -1;
}

static int scan_find_sub(const fz_scan *sc, const fz_tok *name)
{
    for (int k = 0; k < sc->n_subs; k++) {
        const fz_tok *t = &sc->lines[sc->sub_line[k]].tok[1];
        if (t->n == name->n && memcmp(t->s, name->s, t->n) == 0)
            return k;
    }
    return -1;
}

static long sat_add(long a, long b)
{
    return a > FUZZ_MAX_EXPANDED_LINES * 4 - b ? FUZZ_MAX_EXPANDED_LINES * 4 : a + b;
}

static long scan_cost(fz_scan *sc, int first, int end, int depth);

/* Cost of instantiating subcircuit k at nesting depth `depth` (1 = instance at top level). */
static long scan_sub_cost(fz_scan *sc, int k, int depth)
{
    if (depth > NETLIST_MAX_SUBCKT_DEPTH)
        return 1; /* the parser stops with its nesting limit */
    long *m = &sc->memo[(size_t)k * (NETLIST_MAX_SUBCKT_DEPTH + 1) + (size_t)depth];
    if (*m < 0)
        *m = scan_cost(sc, sc->sub_line[k] + 1, sc->sub_end[k], depth);
    return *m;
}

/* Lines the parser handles for the line range, expanding X instances (an over-estimate:
 * errors that stop the parser early are ignored). */
static long scan_cost(fz_scan *sc, int first, int end, int depth)
{
    long cost = 0;
    for (int i = first; i < end; i++) {
        const fz_line *ll = &sc->lines[i];
        cost = sat_add(cost, 1);
        if (depth == 0 && tok_is(&ll->tok[0], ".subckt")) {
            for (int k = 0; k < sc->n_subs; k++)
                if (sc->sub_line[k] == i)
                    i = sc->sub_end[k];
            continue;
        }
        if (ll->tok[0].s[0] != 'x')
            continue;
        int first_assign = ll->n_tok;
        for (int j = 1; j < ll->n_tok; j++)
            if (j + 1 < ll->n_tok && tok_is(&ll->tok[j + 1], "=")) {
                first_assign = j;
                break;
            }
        if (first_assign < 2)
            continue;
        int k = scan_find_sub(sc, &ll->tok[first_assign - 1]);
        if (k >= 0)
            cost = sat_add(cost, scan_sub_cost(sc, k, depth + 1));
    }
    return cost;
}

static void scan_clear(fz_scan *sc)
{
    free(sc->text);
    free(sc->lines);
    free(sc->toks);
    free(sc->sub_line);
    free(sc->sub_end);
    free(sc->memo);
}

/* Estimated number of lines the parser will process with every X instance expanded; -1 when
 * the harness itself ran out of memory. */
static long expanded_lines(const char *text, size_t len)
{
    fz_scan sc;
    memset(&sc, 0, sizeof sc);
    long cost = -1;
    if (scan_lines(&sc, text, len) != 0)
        goto done;
    sc.sub_line = malloc((size_t)(sc.n_lines + 1) * sizeof *sc.sub_line);
    sc.sub_end = malloc((size_t)(sc.n_lines + 1) * sizeof *sc.sub_end);
    if (!sc.sub_line || !sc.sub_end)
        goto done;
    for (int i = 0; i < sc.n_lines; i++) {
        const fz_line *ll = &sc.lines[i];
        if (!tok_is(&ll->tok[0], ".subckt") || ll->n_tok < 2)
            continue;
        int j = i + 1;
        while (j < sc.n_lines && !tok_is(&sc.lines[j].tok[0], ".ends"))
            j++;
        if (scan_find_sub(&sc, &ll->tok[1]) < 0) { /* a second definition is an error */
            sc.sub_line[sc.n_subs] = i;
            sc.sub_end[sc.n_subs] = j;
            sc.n_subs++;
        }
    }
    sc.memo = malloc((size_t)(sc.n_subs + 1) * (NETLIST_MAX_SUBCKT_DEPTH + 1) * sizeof *sc.memo);
    if (!sc.memo)
        goto done;
    for (size_t i = 0; i < (size_t)(sc.n_subs + 1) * (NETLIST_MAX_SUBCKT_DEPTH + 1); i++)
        sc.memo[i] = -1;
    cost = scan_cost(&sc, 0, sc.n_lines, 0);
done:
    scan_clear(&sc);
    return cost;
}

/* 1 when the bytes contain "include" in any case: .include reads files, and the fuzzer must
 * not wander the file system (/dev/zero, /dev/stdin). */
static int mentions_include(const uint8_t *data, size_t size)
{
    static const char word[] = "include";
    for (size_t i = 0; i + 7 <= size; i++) {
        size_t k = 0;
        while (k < 7 && (data[i + k] | 0x20) == (uint8_t)word[k])
            k++;
        if (k == 7)
            return 1;
    }
    return 0;
}

/* ---- checks of the library's promises ---------------------------------------------------- */

/* STAGESIM_FUZZ_VERBOSE=1 in the environment: one line per step on stderr (debugging). */
static int verbose(void)
{
    static int v = -1;
    if (v < 0) {
        const char *e = getenv("STAGESIM_FUZZ_VERBOSE");
        v = e && *e && *e != '0';
    }
    return v;
}

static void note(const char *step, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void note(const char *step, const char *fmt, ...)
{
    if (!verbose())
        return;
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "fuzz_netlist: %s: ", step);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

/* A failure always says why, with the status it returned; never an internal error. */
static void check_failure(ss_status st, const ss_error *err)
{
    FUZZ_CHECK(st != SS_ERR_INTERNAL, "SS_ERR_INTERNAL: a broken invariant of the library");
    FUZZ_CHECK(err->code == st, "the error's code differs from the returned status");
    FUZZ_CHECK(err->message[0] != '\0', "a failure without a message");
    FUZZ_CHECK(memchr(err->message, '\0', sizeof err->message) != NULL, "unterminated message");
    FUZZ_CHECK(memchr(err->file, '\0', sizeof err->file) != NULL, "unterminated file name");
    char buf[1400];
    ss_error_format(err, buf, sizeof buf);
    note("error", "%s: %s", ss_status_name(st), buf);
    FUZZ_CHECK(ss_status_name(st) != NULL, "status without a name");
}

/* Walks every cell and label through the public accessors; numeric cells other than the
 * allowed NaN/inf columns must be finite (no silent wrong numbers). */
static void check_table(const ss_table *t, int require_finite)
{
    FUZZ_CHECK(t != NULL, "success without a table");
    int rows = ss_table_rows(t), cols = ss_table_cols(t);
    FUZZ_CHECK(rows >= 0 && cols >= 1, "table shape");
    for (int c = 0; c < cols; c++)
        FUZZ_CHECK(ss_table_col_name(t, c) != NULL, "unnamed column");
    for (int r = 0; r < rows; r++) {
        const char *label = ss_table_row_label(t, r);
        if (label)
            (void)ss_table_lookup(t, label, 0);
        for (int c = 0; c < cols; c++) {
            double v = ss_table_get(t, r, c);
            if (require_finite)
                FUZZ_CHECK(isfinite(v), "a non-finite number in a result table");
        }
    }
}

/* ---- output files: one scratch folder per process ------------------------------------------ */

static char g_dir[256];
static FILE *g_null;

static void cleanup_dir(void)
{
    static const char *const names[] = {"op.csv",      "dc.csv",   "ac.csv",   "stage.csv",
                                        "summary.csv", "bode.svg", "noise.csv", "ac_stream.csv"};
    char path[512];
    for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) {
        snprintf(path, sizeof path, "%s/%s", g_dir, names[i]);
        unlink(path);
    }
    rmdir(g_dir);
    if (g_null)
        fclose(g_null);
}

static int init_output(void)
{
    static int state; /* 0 not tried, 1 ready, -1 unavailable */
    if (state)
        return state > 0;
    state = -1;
    const char *tmp = getenv("TMPDIR");
    snprintf(g_dir, sizeof g_dir, "%s/stagesim-fuzz-XXXXXX", tmp && *tmp ? tmp : "/tmp");
    if (!mkdtemp(g_dir))
        return 0;
    g_null = fopen("/dev/null", "w");
    atexit(cleanup_dir);
    state = 1;
    return 1;
}

static void write_csv(const ss_table *t, const char *name)
{
    if (!init_output())
        return;
    char path[512];
    snprintf(path, sizeof path, "%s/%s", g_dir, name);
    ss_error err = {0};
    ss_status st = ss_table_write_csv(t, path, &err);
    if (st != SS_OK)
        check_failure(st, &err);
}

/* ---- the pipeline -------------------------------------------------------------------------- */

static double dc_points(const dc_sweep_spec *s)
{
    return floor((s->stop - s->start) / s->step + 1e-9) + 1.0;
}

/* 1 when the .ac sweep is short enough to run (its frequency list is computed, as it would be
 * by the sweep, to count it). */
static int ac_within_limit(ss_solver *sv)
{
    double *freqs = NULL;
    int nf = 0;
    ss_error err = {0};
    ss_status st = ac_frequencies(sv, &freqs, &nf, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        note("ac", "frequencies: %s", err.message);
        return 0;
    }
    ss_free(freqs);
    note("ac", "%d frequencies%s", nf, nf > FUZZ_MAX_AC_POINTS ? ": skipped" : "");
    return nf <= FUZZ_MAX_AC_POINTS;
}

/* Reads a whole file into a malloc'd buffer; NULL when it cannot. */
static char *read_back(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    char *buf = NULL;
    size_t cap = 0, n = 0, got;
    char chunk[65536];
    while ((got = fread(chunk, 1, sizeof chunk, f)) > 0) {
        if (n + got > cap) {
            cap = 2 * (n + got);
            char *nb = realloc(buf, cap);
            if (!nb) {
                free(buf);
                fclose(f);
                return NULL;
            }
            buf = nb;
        }
        memcpy(buf + n, chunk, got);
        n += got;
    }
    fclose(f);
    *len = n;
    return buf ? buf : calloc(1, 1);
}

/* The library promise of ss_ac_sweep_write: the very bytes of the table written as CSV. */
static void check_ac_stream(ss_solver *sv)
{
    if (!init_output())
        return;
    char a[512], b[512];
    snprintf(a, sizeof a, "%s/ac.csv", g_dir);
    snprintf(b, sizeof b, "%s/ac_stream.csv", g_dir);
    ss_error err = {0};
    ss_status st = ss_ac_sweep_write(sv, b, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        return;
    }
    size_t la = 0, lb = 0;
    char *ta = read_back(a, &la), *tb = read_back(b, &lb);
    if (ta && tb)
        FUZZ_CHECK(la == lb && memcmp(ta, tb, la) == 0,
                   "ss_ac_sweep_write differs from the table written as CSV");
    free(ta);
    free(tb);
}

/* .ac, then the stage figures and the Bode plot; *summary is kept for the report. */
static void run_ac_stage(ss_solver *sv, const ss_analysis_flags *fl, ss_table **summary)
{
    ss_table *ac = NULL, *stage = NULL;
    ss_error err = {0};
    ss_status st = ss_ac_sweep_run(sv, &ac, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        return;
    }
    check_table(ac, 1);
    note("ac", "ok");
    write_csv(ac, "ac.csv");
    ss_table_destroy(&ac);
    check_ac_stream(sv);
    if (!fl->stage)
        return;
    memset(&err, 0, sizeof err);
    st = ss_stage_run(sv, &stage, summary, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        return;
    }
    /* gain_db may be -inf (zero gain), Zin inf (no input current), corners NaN (outside the
     * sweep): not required finite */
    check_table(stage, 0);
    check_table(*summary, 0);
    note("stage", "ok");
    write_csv(stage, "stage.csv");
    write_csv(*summary, "summary.csv");
    if (init_output()) {
        char path[512];
        snprintf(path, sizeof path, "%s/bode.svg", g_dir);
        memset(&err, 0, sizeof err);
        st = ss_plot_write_bode(sv, stage, *summary, path, &err);
        if (st != SS_OK)
            check_failure(st, &err);
    }
    ss_table_destroy(&stage);
}

static void run_noise(ss_solver *sv)
{
    ss_table *noise = NULL, *summary = NULL, *contrib = NULL;
    ss_error err = {0};
    ss_status st = ss_noise_run(sv, &noise, &summary, &contrib, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        return;
    }
    /* the input-referred density is empty where the gain is 0 */
    check_table(noise, 0);
    check_table(summary, 0);
    check_table(contrib, 0);
    note("noise", "ok");
    write_csv(noise, "noise.csv");
    ss_table_destroy(&noise);
    ss_table_destroy(&summary);
    ss_table_destroy(&contrib);
}

/* .dc last: it moves the operating point */
static void run_dc(ss_solver *sv)
{
    double n = dc_points(&sv->ckt->dc.sweep[0]);
    if (sv->ckt->dc.n == 2)
        n *= dc_points(&sv->ckt->dc.sweep[1]);
    note("dc", "%g points%s", n, n <= FUZZ_MAX_DC_POINTS ? "" : ": skipped");
    if (!(n <= FUZZ_MAX_DC_POINTS))
        return;
    ss_table *dc = NULL;
    ss_error err = {0};
    ss_status st = ss_dc_sweep_run(sv, &dc, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        return;
    }
    check_table(dc, 1);
    note("dc", "ok");
    write_csv(dc, "dc.csv");
    ss_table_destroy(&dc);
}

/* The sanity checks at the operating point: every lint warning names its check at its end and
 * a subject, the count matches, and a second run adds nothing. */
static void run_lint(ss_solver *sv)
{
    ss_error err = {0};
    int n = -1, n2 = -1;
    ss_status st = ss_lint_run(sv, &n, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        return;
    }
    int named = 0, total = 0;
    for (int i = 0; ss_solver_warning(sv, i); i++, total++) {
        const char *subject = NULL, *check = ss_solver_warning_lint(sv, i, &subject);
        if (!check)
            continue;
        named++;
        const char *w = ss_solver_warning(sv, i);
        size_t lw = strlen(w), lc = strlen(check);
        FUZZ_CHECK(subject && subject[0], "lint warning without a subject");
        FUZZ_CHECK(lw > lc + 2 && w[lw - 1] == ']' && w[lw - lc - 2] == '[' &&
                       strncmp(w + lw - lc - 1, check, lc) == 0,
                   "lint warning does not end in its check's name");
    }
    FUZZ_CHECK(named == n, "lint count differs from the warnings it named");
    note("lint", "%d warnings", n);
    st = ss_lint_run(sv, &n2, &err);
    FUZZ_CHECK(st == SS_OK && n2 == n, "a second lint run changed the count");
    int total2 = 0;
    for (int i = 0; ss_solver_warning(sv, i); i++)
        total2++;
    FUZZ_CHECK(total2 == total, "a second lint run added warnings");
}

static void run_analyses(ss_solver *sv)
{
    ss_table *op = NULL, *summary = NULL;
    ss_error err = {0};
    ss_op_stats stats;
    ss_analysis_flags fl;
    ss_solver_analyses(sv, &fl);
    (void)ss_solver_temp_c(sv);

    ss_status st = ss_op_solve(sv, &op, &stats, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        return;
    }
    check_table(op, 1);
    note("op", "ok, %d Newton iterations", stats.newton_iterations);
    write_csv(op, "op.csv");
    ss_table_destroy(&op);
    run_lint(sv);

    int ac_ok = fl.ac && ac_within_limit(sv);
    if (ac_ok)
        run_ac_stage(sv, &fl, &summary);
    if (init_output() && g_null)
        ss_report_write(sv, summary, g_null);
    ss_table_destroy(&summary);
    if (ac_ok && fl.noise)
        run_noise(sv);
    if (fl.dc)
        run_dc(sv);
    for (int i = 0; ss_solver_warning(sv, i); i++)
        FUZZ_CHECK(ss_solver_warning(sv, i)[0] != '\0', "empty warning");
}

/* ---- API calls named in the input ----------------------------------------------------------
 * Comment lines the parser ignores drive the calls a program makes besides parsing:
 *   *@set NAME=VALUE        an override passed to the parser (up to FUZZ_MAX_SETS)
 *   *@stage SRC NODE [LOAD] ss_solver_set_stage (and ss_solver_set_load) after parsing
 *   *@get NAME              ss_circuit_get_value after parsing
 *   *@nodes A [B [C]]        ss_solver_select_nodes after parsing                           */
#define FUZZ_MAX_SETS 4
#define FUZZ_MAX_NODES 3

typedef struct fz_api {
    char *line[FUZZ_MAX_SETS + 3]; /* NUL-terminated copies, split in place */
    int n_lines;
    ss_override sets[FUZZ_MAX_SETS];
    int n_sets;
    const char *stage_src, *stage_node, *stage_load, *get_name;
    const char *nodes[FUZZ_MAX_NODES];
    int n_nodes;
} fz_api;

/* Next space-separated word of *s (NUL-terminated in place), NULL at the end. */
static char *next_word(char **s)
{
    char *p = *s;
    while (*p == ' ' || *p == '\t' || *p == '\r')
        p++;
    if (!*p)
        return NULL;
    char *w = p;
    while (*p && *p != ' ' && *p != '\t' && *p != '\r')
        p++;
    if (*p)
        *p++ = '\0';
    *s = p;
    return w;
}

static void api_scan(fz_api *api, const uint8_t *data, size_t size)
{
    memset(api, 0, sizeof *api);
    size_t pos = 0;
    while (pos < size && api->n_lines < FUZZ_MAX_SETS + 3) {
        const uint8_t *nl = memchr(data + pos, '\n', size - pos);
        size_t end = nl ? (size_t)(nl - data) : size;
        size_t n = end - pos;
        if (n > 2 && data[pos] == '*' && data[pos + 1] == '@') {
            char *copy = malloc(n - 1);
            if (!copy)
                break;
            memcpy(copy, data + pos + 2, n - 2);
            copy[n - 2] = '\0';
            char *rest = copy, *cmd = next_word(&rest);
            int keep = 0;
            if (cmd && strcmp(cmd, "set") == 0 && api->n_sets < FUZZ_MAX_SETS) {
                char *w = next_word(&rest), *eq = w ? strchr(w, '=') : NULL;
                if (eq) {
                    *eq = '\0';
                    api->sets[api->n_sets].name = w;
                    api->sets[api->n_sets].value = eq + 1;
                    api->n_sets++;
                    keep = 1;
                }
            } else if (cmd && strcmp(cmd, "stage") == 0 && !api->stage_src) {
                api->stage_src = next_word(&rest);
                api->stage_node = next_word(&rest);
                api->stage_load = next_word(&rest);
                keep = api->stage_src && api->stage_node;
                if (!keep)
                    api->stage_src = api->stage_node = api->stage_load = NULL;
            } else if (cmd && strcmp(cmd, "get") == 0 && !api->get_name) {
                api->get_name = next_word(&rest);
                keep = api->get_name != NULL;
            } else if (cmd && strcmp(cmd, "nodes") == 0 && !api->n_nodes) {
                const char *w;
                while (api->n_nodes < FUZZ_MAX_NODES && (w = next_word(&rest)))
                    api->nodes[api->n_nodes++] = w;
                keep = api->n_nodes > 0;
            }
            if (keep)
                api->line[api->n_lines++] = copy;
            else
                free(copy);
        }
        pos = end + 1;
    }
}

static void api_clear(fz_api *api)
{
    for (int i = 0; i < api->n_lines; i++)
        free(api->line[i]);
}

/* The calls after parsing; 0 to go on with the analyses. */
static int api_calls(ss_circuit *ckt, ss_solver *sv, const fz_api *api)
{
    ss_error err = {0};
    if (api->get_name) {
        double v;
        ss_status st = ss_circuit_get_value(ckt, api->get_name, &v, &err);
        if (st != SS_OK)
            check_failure(st, &err);
        else
            FUZZ_CHECK(isfinite(v), "ss_circuit_get_value gave a non-finite value");
    }
    if (api->n_nodes) {
        memset(&err, 0, sizeof err);
        ss_status st = ss_solver_select_nodes(sv, api->nodes, api->n_nodes, &err);
        if (st != SS_OK) {
            check_failure(st, &err);
            return -1;
        }
    }
    if (api->stage_src) {
        double load = api->stage_load ? strtod(api->stage_load, NULL) : 0.0;
        memset(&err, 0, sizeof err);
        ss_status st = ss_solver_set_stage(sv, api->stage_src, api->stage_node, &err);
        if (st == SS_OK && api->stage_load)
            st = ss_solver_set_load(sv, load, &err);
        if (st != SS_OK) {
            check_failure(st, &err);
            return -1;
        }
    }
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > FUZZ_MAX_INPUT_BYTES || mentions_include(data, size)) {
        note("skip", "input too long or mentions include");
        return 0;
    }
    long lines = expanded_lines((const char *)data, size);
    if (lines < 0 || lines > FUZZ_MAX_EXPANDED_LINES) {
        note("skip", "about %ld lines after subcircuit expansion", lines);
        return 0;
    }
    fz_api api;
    api_scan(&api, data, size);

    ss_circuit *ckt = NULL;
    ss_error err = {0};
    ss_status st = ss_circuit_parse_text((const char *)data, size, "fuzz.cir",
                                         api.n_sets ? api.sets : NULL, api.n_sets, &ckt, &err);
    if (st != SS_OK) {
        check_failure(st, &err);
        FUZZ_CHECK(ckt == NULL, "a failed parse wrote the circuit");
        api_clear(&api);
        return 0;
    }
    FUZZ_CHECK(ckt != NULL, "a successful parse without a circuit");
    note("parse", "ok, %d elements, %d nodes (about %ld lines expanded)", ckt->n_elem,
         ckt->n_nodes, lines);
    ss_solver *sv = NULL;
    FUZZ_CHECK(ss_solver_create(ckt, &sv, &err) == SS_OK || err.code == SS_ERR_NOMEM,
               "no solver context for a parsed circuit");
    if (sv && api_calls(ckt, sv, &api) == 0 && ckt->n_elem <= FUZZ_MAX_ANALYSIS_ELEMENTS &&
        ckt->n_nodes <= FUZZ_MAX_ANALYSIS_NODES && ckt->opt.newton_iters <= FUZZ_MAX_NEWTON_ITERS)
        run_analyses(sv);
    ss_solver_destroy(&sv);
    FUZZ_CHECK(sv == NULL, "destroy did not null the context");
    ss_circuit_destroy(&ckt);
    FUZZ_CHECK(ckt == NULL, "destroy did not null the handle");
    api_clear(&api);
    return 0;
}
