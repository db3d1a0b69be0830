/* refine: the preferred values of a netlist's free values (.choose) that meet every limit with
 * the largest normalised margin at the nominal point and at named corners (beta, temperature,
 * supply). The netlist is parsed once; every worker thread owns one solver context per corner,
 * and a candidate changes the free values in place on them (never a new parse). The search is
 * Nelder-Mead on the logarithms of the values (J. A. Nelder and R. Mead, "A simplex method for
 * function minimization", Computer Journal 7 (1965) 308-313), then a neighbourhood search on
 * the series lattice: every value one step up or down, then every pair of values a step each.
 * Every decision reads only the candidates' results, which depend only on their values (each
 * operating point starts from zero), so the result is the same for any number of threads.
 * docs/refine.md says what the margins are and how the search goes. */
#define _POSIX_C_SOURCE 200809L
#include <complex.h>
#include <ctype.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "netlist/netlist.h"
#include "output/output.h"
#include "stagesim/refine.h"
#include "study/study.h"

#define REFINE_MAX_THREADS 256
#define REFINE_MAX_FREE 64
#define REFINE_MAX_CORNERS 64
/* a margin for a candidate without an operating point (or a figure that is empty): below any
 * margin a solved candidate can have (those are clamped at MARGIN_FLOOR) */
#define MARGIN_NO_SOLUTION (-1000.0)
#define MARGIN_FLOOR (-100.0)

typedef struct free_value {
    const char *name; /* lower case */
    int series;
    double lo, hi;
    double start;       /* as the netlist writes it */
    long k_lo, k_hi;    /* the lattice indices within [lo, hi] */
    const char *file;   /* the .choose line */
    int line;
    int src_line;       /* the netlist line holding the value token */
    size_t tok_off, tok_len; /* the value token within the netlist text */
    double chosen;
} free_value;

typedef struct corner {
    char name[96];
    int n_set;
    char set_name[REFINE_MAX_CORNERS][160];
    double set_value[REFINE_MAX_CORNERS];
    int set_temp;
    double temp_c;
} corner;

enum limit_kind { LK_OP, LK_FREQ, LK_OTHER };

typedef struct limit_plan {
    int kind;
    int op_row; /* LK_OP: the row of op_rows */
    int is_db;
} limit_plan;

static double now_s(void);

typedef struct worker {
    struct ss_refine *r;
    int id;
    ss_solver **sv;   /* one per corner */
    double *op_vals;  /* op_rows values, n_op_rows */
    double *trial_fig; /* a trial's figures, n_limits */
    int op_count;
    pthread_t th;
    int started;
    int nomem; /* a solve ran out of memory: the batch fails, not the candidate */
} worker;

typedef struct path_row {
    char binding[300];
    double step, phase, candidates, min_margin;
} path_row;

struct ss_refine {
    ss_arena arena;
    const char *netlist;
    ss_override *sets;
    int n_sets;
    ss_circuit *ckt;
    ss_solver *nominal_sv; /* names, the stage, the limits' check */
    const char *stage_in, *stage_out;
    ss_limits *limits;
    free_value fv[REFINE_MAX_FREE];
    int n_free;
    corner *corners;
    int n_corners;
    int beta_set, beta_relative;
    double beta_lo, beta_hi;
    int temps_set;
    double temp_lo, temp_hi;
    struct {
        const char *name;
        double pct;
    } supply[16];
    int n_supply;
    int threads;
    long budget;
    ss_progress_fn progress;
    void *progress_ctx;

    /* the run */
    limit_plan *plan;
    int n_op_rows;
    worker *workers;
    int n_workers;
    pthread_mutex_t mu;
    pthread_cond_t cv_work, cv_done;
    int sync_ready;
    long generation;
    int quit;
    /* the batch: n_batch candidates' values; per unit (candidate x corner) the margins */
    double *batch_vals;  /* n_batch x n_free */
    double *batch_marg;  /* n_batch x n_corners x n_limits */
    double *batch_fig;   /* n_batch x n_corners x n_limits: the figure values */
    int *batch_ok;       /* n_batch x n_corners */
    int n_batch, cap_batch;
    long next_unit, units_left, n_units;
    /* results */
    long candidates, circuits, failed;
    double seconds;
    int ran;
    double *best_vals;  /* n_free */
    double *best_marg, *best_fig;
    int *best_ok;
    double best_obj, best_min;
    int feasible;
    path_row *path;
    int n_path, cap_path;
    char **binding;
    int n_binding;

    /* tolerance trials (docs/refine.md, "Yield"): with tolerances the lattice phases score a
     * candidate by the fraction of the same trials that meet every limit */
    ss_study *tol_study; /* the tolerances, parsed and drawn as spread parses and draws them */
    int n_tols;
    int *tol_free;       /* per tolerance: the free value it names (-1 none) */
    int free_tol[REFINE_MAX_FREE]; /* per free value: the tolerance naming it (-1 none) */
    long trials;
    unsigned long long seed;
    double min_yield;    /* the target, -1 none */
    double *trial_vals;  /* trials x n_tols, drawn once: every candidate sees the same draws */
    int scoring;         /* 1 in the lattice phases: objective() is the yield score */
    int batch_kind;      /* 0 candidates x corners, 1 trial candidates x trials */
    int *mc_cand;        /* the batch's candidates given trials */
    int n_mc;
    unsigned char *mc_fail; /* n_mc x trials x (n_limits + 1): 1 where the trial fails that
                             * limit; the last slot 1 when the trial has no operating point */
    double *batch_yield; /* per batch candidate: its yield, NaN when not given trials */
    long *batch_lfail;   /* per batch candidate: trials failing each limit, then unsolved */
    long mc_candidates, mc_circuits;
    double best_yield;
    long *best_lfail;
    double mc_seconds;
};

/* ---- setup ------------------------------------------------------------------------------- */

static char *lower_dup(ss_arena *a, const char *s)
{
    char *d = arena_strdup(a, s);
    if (d)
        for (char *c = d; *c; c++)
            *c = (char)tolower((unsigned char)*c);
    return d;
}

static ss_status nomem(ss_error *err) { return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory"); }

/* 1 when the n bytes at p are name (lower case) in any case. */
static int ascii_prefix_eq(const char *p, const char *name, size_t n)
{
    for (size_t i = 0; i < n; i++)
        if (tolower((unsigned char)p[i]) != (unsigned char)name[i])
            return 0;
    return 1;
}

/* The text of physical line `line` (1-based) of text: its start, *len its length. NULL when the
 * text has fewer lines. */
static const char *text_line(const char *text, size_t text_len, int line, size_t *len)
{
    const char *p = text, *end = text + text_len;
    for (int l = 1; l < line && p < end; l++) {
        const char *nl = memchr(p, '\n', (size_t)(end - p));
        if (!nl)
            return NULL;
        p = nl + 1;
    }
    if (p >= end && line > 1)
        return NULL;
    const char *nl = memchr(p, '\n', (size_t)(end - p));
    *len = (size_t)((nl ? nl : end) - p);
    if (*len > 0 && p[*len - 1] == '\r')
        (*len)--;
    return p;
}

/* Finds the token holding free value f in the netlist text: the element's fourth token (NAME
 * N1 N2 VALUE) or, on a .param line, the text after `NAME =`. It must be a plain number equal
 * to the parsed value (no {expression}), on the line itself. */
static ss_status locate_token(ss_refine *r, free_value *f, const char *text, size_t text_len,
                              int is_param, const char *where_file, int where_line,
                              ss_error *err)
{
    if (!where_file || strcmp(where_file, r->ckt->file) != 0)
        return err_set(err, SS_ERR_INPUT, f->file, f->line,
                       ".choose %s: it is written in %s, not in the netlist file itself; refine "
                       "rewrites only the netlist file",
                       f->name, where_file ? where_file : "an .include");
    size_t len;
    const char *ln = text_line(text, text_len, where_line, &len);
    if (!ln)
        return err_set(err, SS_ERR_INTERNAL, f->file, f->line, ".choose %s: line %d not found",
                       f->name, where_line);
    const char *p = ln, *end = ln + len;
    const char *tok = NULL;
    size_t tlen = 0;
    if (!is_param) {
        for (int t = 0; t < 4; t++) {
            while (p < end && (*p == ' ' || *p == '\t'))
                p++;
            tok = p;
            while (p < end && *p != ' ' && *p != '\t')
                p++;
            tlen = (size_t)(p - tok);
        }
    } else {
        size_t nl = strlen(f->name);
        while (p < end) {
            /* NAME at a token start, then optional blanks and '=' */
            if ((p == ln || p[-1] == ' ' || p[-1] == '\t') && (size_t)(end - p) > nl &&
                ascii_prefix_eq(p, f->name, nl)) {
                const char *q = p + nl;
                while (q < end && (*q == ' ' || *q == '\t'))
                    q++;
                if (q < end && *q == '=') {
                    q++;
                    while (q < end && (*q == ' ' || *q == '\t'))
                        q++;
                    tok = q;
                    while (q < end && *q != ' ' && *q != '\t')
                        q++;
                    tlen = (size_t)(q - tok);
                    break;
                }
            }
            p++;
        }
    }
    char buf[64];
    double v = SS_NAN;
    int ok = tok && tlen > 0 && tlen < sizeof buf;
    if (ok) {
        memcpy(buf, tok, tlen);
        buf[tlen] = '\0';
        size_t n = value_scan(buf, &v);
        ok = n > 0 && buf[0] != '{' && isfinite(v) && fabs(v - f->start) <= 1e-12 * fabs(f->start);
    }
    if (!ok)
        return err_set(err, SS_ERR_INPUT, f->file, f->line,
                       ".choose %s: its value must be written as a plain number on %s:%d "
                       "(%s), so the chosen netlist can carry the chosen value",
                       f->name, where_file, where_line,
                       is_param ? "NAME=VALUE" : "NAME NODE NODE VALUE");
    f->src_line = where_line;
    f->tok_off = (size_t)(tok - text);
    f->tok_len = tlen;
    return SS_OK;
}

/* `.choose NAME SERIES LO..HI` (joined, lower case) into a free value. */
static ss_status parse_choice(ss_refine *r, const struct study_line *sl, const char *text,
                              size_t text_len, ss_error *err)
{
    if (r->n_free == REFINE_MAX_FREE)
        return err_set(err, SS_ERR_LIMIT, sl->file, sl->line, ".choose: more than %d free values",
                       REFINE_MAX_FREE);
    free_value *f = &r->fv[r->n_free];
    memset(f, 0, sizeof *f);
    f->file = sl->file;
    f->line = sl->line;
    /* pack "1k .. 100k" into "1k..100k" */
    char buf[600], packed[600];
    snprintf(buf, sizeof buf, "%s", sl->text);
    size_t k = 0;
    for (size_t i = 0; buf[i] && k + 1 < sizeof packed; i++) {
        if (buf[i] == ' ' && ((buf[i + 1] == '.' && buf[i + 2] == '.') ||
                              (k >= 2 && packed[k - 1] == '.' && packed[k - 2] == '.')))
            continue;
        packed[k++] = buf[i];
    }
    packed[k] = '\0';
    char *save = NULL;
    char *name = strtok_r(packed, " ", &save);
    char *ser = strtok_r(NULL, " ", &save);
    char *range = strtok_r(NULL, " ", &save);
    char *extra = strtok_r(NULL, " ", &save);
    if (!name || !ser || !range || extra)
        return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                       ".choose needs NAME SERIES LO..HI (e.g. .choose R1 E24 1k..100k), got "
                       "'%s'",
                       sl->text);
    f->name = arena_strdup(&r->arena, name);
    if (!f->name)
        return nomem(err);
    for (int j = 0; j < r->n_free; j++)
        if (strcmp(r->fv[j].name, f->name) == 0)
            return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                           ".choose %s: chosen twice (first at %s:%d)", f->name, r->fv[j].file,
                           r->fv[j].line);
    if (shadowed_by(r->sets, r->n_sets, f->name))
        return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                       ".choose %s: also given with --set; a free value is refine's to choose",
                       f->name);
    /* the series */
    const int *tab;
    double scale;
    char *endp = NULL;
    long sn = ser[0] == 'e' ? strtol(ser + 1, &endp, 10) : 0;
    if (ser[0] != 'e' || !endp || *endp || sn <= 0 || sn > 1000 ||
        eseries_table((int)sn, &tab, &scale) == 0)
        return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                       ".choose %s: unknown series '%s' (use E6, E12, E24, E48, E96 or E192)",
                       f->name, ser);
    f->series = (int)sn;
    /* the range */
    char *dots = strstr(range, "..");
    ss_error verr = {0};
    if (!dots)
        return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                       ".choose %s: the range must be written LO..HI, got '%s'", f->name, range);
    *dots = '\0';
    if (ss_value_parse(range, &f->lo, &verr) != SS_OK ||
        ss_value_parse(dots + 2, &f->hi, &verr) != SS_OK)
        return err_set(err, SS_ERR_INPUT, sl->file, sl->line, ".choose %s: %s", f->name,
                       verr.message);
    if (!(f->lo > 0.0) || !(f->hi > f->lo))
        return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                       ".choose %s: the range %g..%g is empty (needs 0 < LO < HI)", f->name, f->lo,
                       f->hi);
    long klo, khi;
    eseries_lattice_index(f->series, f->lo, &klo);
    eseries_lattice_index(f->series, f->hi, &khi);
    if (eseries_lattice_value(f->series, klo) < f->lo * (1.0 - 1e-12))
        klo++;
    if (eseries_lattice_value(f->series, khi) > f->hi * (1.0 + 1e-12))
        khi--;
    if (khi < klo)
        return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                       ".choose %s: no E%d value lies within %g..%g", f->name, f->series, f->lo,
                       f->hi);
    f->k_lo = klo;
    f->k_hi = khi;
    /* the name: an element's main value or a global .param, written in the netlist file */
    ss_error nerr = {0};
    if (ss_circuit_get_value(r->ckt, f->name, &f->start, &nerr) != SS_OK)
        return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                       ".choose %s: no element or .param of that name", f->name);
    int e = circuit_find_elem(r->ckt, f->name);
    if (e >= 0) {
        const element *el = &r->ckt->elem[e];
        if (strchr(f->name, '.'))
            return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                           ".choose %s: an element inside a subcircuit cannot be chosen (make "
                           "its value a .param of the netlist)",
                           f->name);
        if (!(f->start > 0.0))
            return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                           ".choose %s: its value %g is not positive", f->name, f->start);
        ss_status st = locate_token(r, f, text, text_len, 0, el->file, el->line, err);
        if (st != SS_OK)
            return st;
    } else {
        const global_param *gp = NULL;
        for (int j = 0; j < r->ckt->n_params; j++)
            if (strcmp(r->ckt->params[j].name, f->name) == 0)
                gp = &r->ckt->params[j];
        if (!gp)
            return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                           ".choose %s: a model parameter cannot be chosen (name an element or "
                           "a .param)",
                           f->name);
        if (!(f->start > 0.0))
            return err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                           ".choose %s: its value %g is not positive", f->name, f->start);
        ss_status st = locate_token(r, f, text, text_len, 1, gp->file, gp->line, err);
        if (st != SS_OK)
            return st;
    }
    f->chosen = f->start;
    r->n_free++;
    return SS_OK;
}

ss_status ss_refine_create(const char *netlist_path, const ss_override *sets, int n_sets,
                           ss_refine **out, ss_error *err)
{
    ss_refine *r = ss_alloc(sizeof *r);
    if (!r)
        return nomem(err);
    r->budget = 20000;
    r->min_yield = -1.0;
    r->trials = 200;
    r->seed = 1;
    r->best_yield = SS_NAN;
    r->netlist = arena_strdup(&r->arena, netlist_path);
    r->sets = arena_alloc(&r->arena, (size_t)(n_sets + 1) * sizeof *r->sets);
    if (!r->netlist || !r->sets) {
        ss_refine_destroy(&r);
        return nomem(err);
    }
    for (int i = 0; i < n_sets; i++) {
        r->sets[i].name = arena_strdup(&r->arena, sets[i].name);
        r->sets[i].value = arena_strdup(&r->arena, sets[i].value);
        if (!r->sets[i].name || !r->sets[i].value) {
            ss_refine_destroy(&r);
            return nomem(err);
        }
    }
    r->n_sets = n_sets;
    ss_status st = ss_circuit_parse_file(netlist_path, sets, n_sets, &r->ckt, err);
    if (st == SS_OK)
        st = ss_solver_create(r->ckt, &r->nominal_sv, err);
    if (st == SS_OK && (st = ss_limits_create(&r->limits, err)) == SS_OK)
        st = ss_limits_add_circuit(r->limits, r->ckt, err);
    if (st != SS_OK) {
        ss_refine_destroy(&r);
        return st;
    }
    /* the netlist's bytes, for the tokens the chosen netlist replaces */
    ss_strbuf b = {0};
    int sys_errno;
    int rc = strbuf_read_file(&b, netlist_path, (size_t)1 << 30, &sys_errno);
    if (rc != SS_READ_OK) {
        strbuf_clear(&b);
        ss_refine_destroy(&r);
        return err_set(err, SS_ERR_IO, netlist_path, 0, "cannot read the netlist again: %s",
                       strbuf_read_error_text(rc, sys_errno));
    }
    for (int i = 0; i < r->ckt->n_study_lines && st == SS_OK; i++)
        if (r->ckt->study_lines[i].is_choice)
            st = parse_choice(r, &r->ckt->study_lines[i], b.data ? b.data : "", b.len, err);
    strbuf_clear(&b);
    if (st == SS_OK && r->n_free == 0)
        st = err_set(err, SS_ERR_INPUT, netlist_path, 0,
                     "refine: the netlist has no free value; mark some with `.choose NAME "
                     "SERIES LO..HI` (docs/netlist.md)");
    if (st != SS_OK) {
        ss_refine_destroy(&r);
        return st;
    }
    *out = r;
    return SS_OK;
}

ss_status ss_refine_set_stage(ss_refine *r, const char *in_source, const char *out_node,
                              ss_error *err)
{
    ss_status st = ss_solver_set_stage(r->nominal_sv, in_source, out_node, err);
    if (st != SS_OK)
        return st;
    r->stage_in = arena_strdup(&r->arena, in_source);
    r->stage_out = arena_strdup(&r->arena, out_node);
    return r->stage_in && r->stage_out ? SS_OK : nomem(err);
}

ss_status ss_refine_add_limits(ss_refine *r, const ss_limits *limits, ss_error *err)
{
    for (int i = 0; limits && i < limits->n; i++) {
        if (r->limits->n == r->limits->cap) {
            int ncap = r->limits->cap ? r->limits->cap * 2 : 16;
            limit *ni = ss_realloc(r->limits->items, (size_t)ncap * sizeof *ni);
            if (!ni)
                return nomem(err);
            r->limits->items = ni;
            r->limits->cap = ncap;
        }
        r->limits->items[r->limits->n++] = limits->items[i];
    }
    return SS_OK;
}

ss_status ss_refine_set_beta_range(ss_refine *r, double lo, double hi, int relative,
                                   ss_error *err)
{
    if (!(lo > 0.0) || !(hi > lo) || !isfinite(hi))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "beta range %g,%g: needs 0 < LO < HI", lo, hi);
    r->beta_set = 1;
    r->beta_lo = lo;
    r->beta_hi = hi;
    r->beta_relative = relative;
    return SS_OK;
}

ss_status ss_refine_set_temps(ss_refine *r, double lo_c, double hi_c, ss_error *err)
{
    if (!(temp_in_range(lo_c) && temp_in_range(hi_c) && lo_c < hi_c))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "temperatures %g,%g: needs -273.15 < LO < HI <= 1000", lo_c, hi_c);
    r->temps_set = 1;
    r->temp_lo = lo_c;
    r->temp_hi = hi_c;
    return SS_OK;
}

ss_status ss_refine_add_supply_tol(ss_refine *r, const char *spec, ss_error *err)
{
    const char *eq = strchr(spec, '=');
    size_t sl = strlen(spec);
    if (!eq || eq == spec || sl < 3 || spec[sl - 1] != '%')
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "supply tolerance '%s': write NAME=PCT%% (e.g. vcc=10%%)", spec);
    if (r->n_supply == (int)(sizeof r->supply / sizeof r->supply[0]))
        return err_set(err, SS_ERR_LIMIT, NULL, 0, "more than 16 supply tolerances");
    char num[64];
    size_t nl = (size_t)(spec + sl - 1 - (eq + 1));
    if (nl == 0 || nl >= sizeof num)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "supply tolerance '%s': write NAME=PCT%% (e.g. vcc=10%%)", spec);
    memcpy(num, eq + 1, nl);
    num[nl] = '\0';
    double pct;
    ss_error verr = {0};
    if (ss_value_parse(num, &pct, &verr) != SS_OK || !(pct > 0.0 && pct < 100.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "supply tolerance '%s': the percentage must be above 0 and below 100",
                       spec);
    char name[160];
    size_t n = (size_t)(eq - spec);
    if (n >= sizeof name)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "supply tolerance '%s': name too long", spec);
    memcpy(name, spec, n);
    name[n] = '\0';
    double v;
    ss_error nerr = {0};
    if (ss_solver_get_value(r->nominal_sv, name, &v, &nerr) != SS_OK)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "supply tolerance '%s': %s", spec,
                       nerr.message);
    for (int i = 0; i < r->n_free; i++)
        if (strcasecmp_ascii_eq(r->fv[i].name, name))
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "supply tolerance '%s': %s is a free value (.choose)", spec, name);
    r->supply[r->n_supply].name = lower_dup(&r->arena, name);
    if (!r->supply[r->n_supply].name)
        return nomem(err);
    r->supply[r->n_supply].pct = pct;
    r->n_supply++;
    return SS_OK;
}

ss_status ss_refine_set_threads(ss_refine *r, int n_threads, ss_error *err)
{
    if (n_threads < 1 || n_threads > REFINE_MAX_THREADS)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "threads: %d is outside 1 .. 256", n_threads);
    r->threads = n_threads;
    return SS_OK;
}

ss_status ss_refine_set_budget(ss_refine *r, long max_candidates, ss_error *err)
{
    if (max_candidates < 10 || max_candidates > 10000000L)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "candidate budget %ld is outside 10 .. 10000000", max_candidates);
    r->budget = max_candidates;
    return SS_OK;
}

ss_status ss_refine_add_tolerance(ss_refine *r, const char *spec, ss_error *err)
{
    if (!r->tol_study) {
        ss_status st = ss_study_create(r->netlist, r->sets, r->n_sets, &r->tol_study, err);
        if (st != SS_OK)
            return st;
    }
    return ss_study_add_tolerance(r->tol_study, spec, err);
}

ss_status ss_refine_set_trials(ss_refine *r, long trials, unsigned long long seed,
                               ss_error *err)
{
    if (trials < 1 || trials > 1000000)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "refine: the trials per candidate must be from 1 to 1000000, got %ld",
                       trials);
    r->trials = trials;
    r->seed = seed;
    return SS_OK;
}

ss_status ss_refine_set_min_yield(ss_refine *r, double min_yield, ss_error *err)
{
    if (!(min_yield >= 0.0 && min_yield <= 1.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "refine: the target yield must be from 0 to 1, got %g", min_yield);
    r->min_yield = min_yield;
    return SS_OK;
}

void ss_refine_set_progress(ss_refine *r, ss_progress_fn fn, void *ctx)
{
    r->progress = fn;
    r->progress_ctx = ctx;
}

/* ---- corners ------------------------------------------------------------------------------ */

/* The model's multiplicative spread parameter (BF of a BJT, BETA or KP of a FET: the one its
 * table marks for the corners without a shift), or -1. */
static int gain_param(const model *md)
{
    for (int i = 0; i < md->ops->n_model_params; i++) {
        unsigned f = md->ops->model_params[i].flags;
        if ((f & DMP_CORNER) && !(f & DMP_CORNER_SHIFT))
            return i;
    }
    return -1;
}

static ss_status build_corners(ss_refine *r, ss_error *err)
{
    int n_beta = 0;
    for (int m = 0; m < r->ckt->n_models; m++)
        n_beta += gain_param(r->ckt->models[m]) >= 0;
    int n = 1 + (r->beta_set && n_beta > 0 ? 2 : 0) + (r->temps_set ? 2 : 0) + 2 * r->n_supply;
    if (r->beta_set && n_beta == 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "beta corners: the circuit has no transistor model with a BF");
    if (n_beta > REFINE_MAX_CORNERS)
        return err_set(err, SS_ERR_LIMIT, NULL, 0, "beta corners: more than %d models",
                       REFINE_MAX_CORNERS);
    r->corners = arena_alloc(&r->arena, (size_t)n * sizeof *r->corners);
    if (!r->corners)
        return nomem(err);
    memset(r->corners, 0, (size_t)n * sizeof *r->corners);
    int c = 0;
    snprintf(r->corners[c++].name, sizeof r->corners[0].name, "nominal");
    if (r->beta_set) {
        for (int side = 0; side < 2; side++) {
            corner *k = &r->corners[c++];
            snprintf(k->name, sizeof k->name, side ? "beta_high" : "beta_low");
            for (int m = 0; m < r->ckt->n_models; m++) {
                const model *md = r->ckt->models[m];
                int cp = gain_param(md);
                if (cp < 0)
                    continue;
                if (!r->beta_relative && strcmp(md->ops->model_params[cp].name, "bf") != 0)
                    return err_set(err, SS_ERR_INPUT, NULL, 0,
                                   "beta corners: model '%s' spreads %s, not BF: give the "
                                   "corners as factors (0.5x,2x)",
                                   md->name, md->ops->model_params[cp].name);
                snprintf(k->set_name[k->n_set], sizeof k->set_name[0], "%s.%s", md->name,
                         md->ops->model_params[cp].name);
                double f = side ? r->beta_hi : r->beta_lo;
                k->set_value[k->n_set++] = r->beta_relative ? md->p[cp] * f : f;
            }
        }
    }
    if (r->temps_set) {
        for (int side = 0; side < 2; side++) {
            corner *k = &r->corners[c++];
            snprintf(k->name, sizeof k->name, side ? "temp_high" : "temp_low");
            k->set_temp = 1;
            k->temp_c = side ? r->temp_hi : r->temp_lo;
        }
    }
    for (int i = 0; i < r->n_supply; i++) {
        double v;
        ss_status st = ss_solver_get_value(r->nominal_sv, r->supply[i].name, &v, err);
        if (st != SS_OK)
            return st;
        for (int side = 0; side < 2; side++) {
            corner *k = &r->corners[c++];
            snprintf(k->name, sizeof k->name, "supply_%.60s_%s", r->supply[i].name,
                     side ? "high" : "low");
            snprintf(k->set_name[0], sizeof k->set_name[0], "%s", r->supply[i].name);
            k->set_value[0] = v * (1.0 + (side ? 1.0 : -1.0) * r->supply[i].pct / 100.0);
            k->n_set = 1;
        }
    }
    r->n_corners = c;
    return SS_OK;
}

/* A context for corner k: the stage, the corner's values and temperature. */
static ss_status corner_context(ss_refine *r, int k, ss_solver **out, ss_error *err)
{
    ss_solver *sv = NULL;
    ss_status st = ss_solver_create(r->ckt, &sv, err);
    if (st == SS_OK && r->stage_in)
        st = ss_solver_set_stage(sv, r->stage_in, r->stage_out, err);
    const corner *c = &r->corners[k];
    for (int i = 0; st == SS_OK && i < c->n_set; i++)
        st = ss_solver_set_value(sv, c->set_name[i], c->set_value[i], err);
    if (st == SS_OK && c->set_temp)
        st = ss_solver_set_temp(sv, c->temp_c, err);
    if (st != SS_OK) {
        ss_solver_destroy(&sv);
        return st;
    }
    *out = sv;
    return SS_OK;
}

/* ---- the limits: which figure each needs and its normalised margin ---------------------- */

typedef struct op_match {
    const ss_limits *limits;
    limit_plan *plan;
    int row;
} op_match;

static void match_op_row(void *vc, const char *quantity, const char *elem_name, double value)
{
    (void)value;
    op_match *m = vc;
    char label[1200];
    const char *name = quantity;
    if (elem_name) {
        snprintf(label, sizeof label, "%s(%s)", quantity, elem_name);
        name = label;
    }
    for (int i = 0; i < m->limits->n; i++)
        if (m->plan[i].kind == LK_OTHER && !m->limits->items[i].at_freq &&
            m->plan[i].op_row < 0 && strcmp(m->limits->items[i].quantity, name) == 0) {
            m->plan[i].kind = LK_OP;
            m->plan[i].op_row = m->row;
        }
    m->row++;
}

static int ends_with(const char *s, const char *suffix)
{
    size_t a = strlen(s), b = strlen(suffix);
    return a >= b && strcmp(s + a - b, suffix) == 0;
}

static ss_status plan_limits(ss_refine *r, ss_error *err)
{
    int n = r->limits->n;
    r->plan = arena_alloc(&r->arena, (size_t)(n + 1) * sizeof *r->plan);
    if (!r->plan)
        return nomem(err);
    for (int i = 0; i < n; i++) {
        const limit *lim = &r->limits->items[i];
        r->plan[i].kind = lim->at_freq ? LK_FREQ : LK_OTHER;
        r->plan[i].op_row = -1;
        r->plan[i].is_db = ends_with(lim->base, "_db");
    }
    op_match m = {r->limits, r->plan, 0};
    op_rows(r->nominal_sv, NULL, match_op_row, &m);
    r->n_op_rows = m.row;
    return SS_OK;
}

/* The normalised margin of value v against a limit (docs/refine.md): the distance to each
 * bound relative to the bound's size (or, for a bound of 0, the other bound's, else 1); for a
 * figure in dB, the same of the linear ratio. The smaller of the two sides; clamped below. */
static double norm_margin(const limit *lim, int is_db, double v)
{
    if (isnan(v))
        return MARGIN_NO_SOLUTION;
    v = limit_judged(lim, v);
    double m = HUGE_VAL;
    if (is_db) {
        if (isfinite(lim->lo))
            m = fmin(m, pow(10.0, (v - lim->lo) / 20.0) - 1.0);
        if (isfinite(lim->hi))
            m = fmin(m, 1.0 - pow(10.0, (v - lim->hi) / 20.0));
    } else {
        if (isfinite(lim->lo)) {
            double d = fabs(lim->lo);
            if (d == 0.0)
                d = isfinite(lim->hi) && lim->hi != 0.0 ? fabs(lim->hi) : 1.0;
            m = fmin(m, (v - lim->lo) / d);
        }
        if (isfinite(lim->hi)) {
            double d = fabs(lim->hi);
            if (d == 0.0)
                d = isfinite(lim->lo) && lim->lo != 0.0 ? fabs(lim->lo) : 1.0;
            m = fmin(m, (lim->hi - v) / d);
        }
    }
    if (!isfinite(m))
        m = m > 0 ? 1e6 : MARGIN_FLOOR;
    return fmax(m, MARGIN_FLOOR);
}

/* ---- one unit of work: a candidate at a corner ----------------------------------------- */

static void collect_op(void *vc, const char *quantity, const char *elem_name, double value)
{
    (void)quantity;
    (void)elem_name;
    worker *w = vc;
    if (w->op_count < w->r->n_op_rows)
        w->op_vals[w->op_count] = value;
    w->op_count++;
}

/* The figure of every limit into fig[0 .. n_limits-1] (NaN where there is none), the operating
 * point of sv solved. */
static ss_status unit_figures(worker *w, ss_solver *sv, double *fig, ss_error *err_out)
{
    ss_refine *r = w->r;
    int nl = r->limits->n;
    ss_error err = {0};
    ss_status st = SS_OK;
    ss_table *figs = NULL;
    w->op_count = 0;
    {
        op_rows(sv, sv->x_op, collect_op, w);
        for (int i = 0; i < nl && st == SS_OK; i++) {
            const limit *lim = &r->limits->items[i];
            double v = SS_NAN;
            if (r->plan[i].kind == LK_OP) {
                v = w->op_vals[r->plan[i].op_row];
            } else if (r->plan[i].kind == LK_FREQ) {
                double complex g;
                double zin, zout;
                st = stage_at_frequency(sv, lim->freq_hz, &g, &zin, &zout, &err);
                if (st == SS_OK)
                    v = strcmp(lim->base, "gain") == 0        ? cabs(g)
                        : strcmp(lim->base, "gain_db") == 0   ? 20.0 * log10(cabs(g))
                        : strcmp(lim->base, "phase_deg") == 0 ? carg(g) * 180.0 / SS_PI
                        : strcmp(lim->base, "zin_ohm") == 0   ? zin
                                                              : zout;
            } else {
                /* a stage summary, noise or large-signal figure: the whole figure set once */
                if (!figs)
                    st = ss_figures_compute(sv, r->limits, &figs, &err);
                if (st == SS_OK)
                    v = ss_table_lookup(figs, lim->quantity, ss_table_col_index(figs, "value"));
            }
            fig[i] = v;
        }
    }
    ss_table_destroy(&figs);
    *err_out = err;
    return st;
}

static void eval_unit(worker *w, long unit)
{
    ss_refine *r = w->r;
    int nc = r->n_corners, nl = r->limits->n;
    long cand = unit / nc;
    int k = (int)(unit % nc);
    ss_solver *sv = w->sv[k];
    const double *vals = r->batch_vals + cand * r->n_free;
    double *marg = r->batch_marg + unit * nl;
    double *fig = r->batch_fig + unit * nl;
    ss_error err = {0};
    ss_status st = SS_OK;
    if (r->n_tols > 0)
        ss_solver_reset_values(sv); /* a trial's values away (no corner sets any with them) */
    for (int i = 0; i < r->n_free && st == SS_OK; i++)
        st = ss_solver_set_value(sv, r->fv[i].name, vals[i], &err);
    if (st == SS_OK)
        st = op_solve_into(sv, NULL, &err);
    if (st == SS_OK)
        st = unit_figures(w, sv, fig, &err);
    if (st == SS_OK)
        for (int i = 0; i < nl; i++)
            marg[i] = norm_margin(&r->limits->items[i], r->plan[i].is_db, fig[i]);
    if (st == SS_ERR_NOMEM)
        w->nomem = 1;
    r->batch_ok[unit] = st == SS_OK;
    if (st != SS_OK)
        for (int i = 0; i < nl; i++) {
            marg[i] = MARGIN_NO_SOLUTION;
            fig[i] = SS_NAN;
        }
}

/* One tolerance trial of a candidate: mc unit = (its index among mc_cand) x trials + trial.
 * Every value back to the netlist's, the candidate's free values (a toleranced one times its
 * trial's draw over the tolerance's nominal: the tolerance spreads around the candidate's
 * value as it spreads around the chosen value in the chosen netlist), the other toleranced
 * values as drawn; judged against every limit as spread judges a trial. */
static void eval_trial(worker *w, long unit)
{
    ss_refine *r = w->r;
    int nl = r->limits->n;
    long trial = unit % r->trials;
    int cand = r->mc_cand[unit / r->trials];
    ss_solver *sv = w->sv[0];
    const double *vals = r->batch_vals + (size_t)cand * (size_t)r->n_free;
    const double *tv = r->trial_vals + (size_t)trial * (size_t)r->n_tols;
    unsigned char *fail = r->mc_fail + (size_t)unit * (size_t)(nl + 1);
    ss_error err = {0};
    ss_status st = SS_OK;
    ss_solver_reset_values(sv);
    for (int i = 0; i < r->n_free && st == SS_OK; i++) {
        int t = r->free_tol[i];
        double v = t < 0 ? vals[i] : vals[i] * (tv[t] / study_tol_nominal(r->tol_study, t));
        st = ss_solver_set_value(sv, r->fv[i].name, v, &err);
    }
    for (int t = 0; t < r->n_tols && st == SS_OK; t++) {
        if (r->tol_free[t] >= 0)
            continue;
        const char *name = study_tol_name(r->tol_study, t);
        st = strcmp(name, "temp") == 0 ? ss_solver_set_temp(sv, tv[t], &err)
                                       : ss_solver_set_value(sv, name, tv[t], &err);
    }
    if (st == SS_OK)
        st = op_solve_into(sv, NULL, &err);
    double *fig = w->trial_fig;
    if (st == SS_OK)
        st = unit_figures(w, sv, fig, &err);
    if (st == SS_ERR_NOMEM)
        w->nomem = 1;
    for (int i = 0; i < nl; i++) {
        const limit *lim = &r->limits->items[i];
        double x = st == SS_OK ? limit_judged(lim, fig[i]) : SS_NAN;
        fail[i] = !(x >= lim->lo && x <= lim->hi);
    }
    fail[nl] = st != SS_OK;
}

/* ---- the worker pool -------------------------------------------------------------------- */

static void work_units(worker *w)
{
    ss_refine *r = w->r;
    for (;;) {
        pthread_mutex_lock(&r->mu);
        long u = r->next_unit < r->n_units ? r->next_unit++ : -1;
        pthread_mutex_unlock(&r->mu);
        if (u < 0)
            return;
        if (r->batch_kind)
            eval_trial(w, u);
        else
            eval_unit(w, u);
        pthread_mutex_lock(&r->mu);
        if (--r->units_left == 0)
            pthread_cond_signal(&r->cv_done);
        pthread_mutex_unlock(&r->mu);
    }
}

static void *worker_main(void *arg)
{
    worker *w = arg;
    ss_refine *r = w->r;
    long seen = 0;
    for (;;) {
        pthread_mutex_lock(&r->mu);
        while (!r->quit && r->generation == seen)
            pthread_cond_wait(&r->cv_work, &r->mu);
        int quit = r->quit;
        seen = r->generation;
        pthread_mutex_unlock(&r->mu);
        if (quit)
            return NULL;
        work_units(w);
    }
}

/* Solves the batch's n_batch candidates at every corner (the calling thread works too).
 * SS_ERR_NOMEM when a solve ran out of memory (the batch's results are then not to be used). */
static ss_status run_batch(ss_refine *r, ss_error *err)
{
    pthread_mutex_lock(&r->mu);
    r->n_units = r->batch_kind ? (long)r->n_mc * r->trials : (long)r->n_batch * r->n_corners;
    r->units_left = r->n_units;
    r->next_unit = 0;
    r->generation++;
    pthread_cond_broadcast(&r->cv_work);
    pthread_mutex_unlock(&r->mu);
    work_units(&r->workers[0]);
    pthread_mutex_lock(&r->mu);
    while (r->units_left > 0)
        pthread_cond_wait(&r->cv_done, &r->mu);
    pthread_mutex_unlock(&r->mu);
    if (r->batch_kind) {
        r->mc_candidates += r->n_mc;
        r->mc_circuits += r->n_units;
        int nl = r->limits->n;
        for (long u = 0; u < r->n_units; u++)
            r->failed += r->mc_fail[(size_t)u * (size_t)(nl + 1) + (size_t)nl];
    } else {
        r->candidates += r->n_batch;
        for (long u = 0; u < r->n_units; u++)
            r->failed += !r->batch_ok[u];
    }
    r->circuits += r->n_units;
    int short_of_memory = 0;
    for (int t = 0; t < r->n_workers; t++)
        short_of_memory |= r->workers[t].nomem;
    return short_of_memory ? nomem(err) : SS_OK;
}

static ss_status batch_reserve(ss_refine *r, int n, ss_error *err)
{
    if (n <= r->cap_batch)
        return SS_OK;
    size_t units = (size_t)n * (size_t)r->n_corners;
    size_t nl = (size_t)r->limits->n;
    double *v = ss_realloc(r->batch_vals, (size_t)n * (size_t)r->n_free * sizeof *v);
    if (v)
        r->batch_vals = v;
    double *m = ss_realloc(r->batch_marg, units * nl * sizeof *m);
    if (m)
        r->batch_marg = m;
    double *f = ss_realloc(r->batch_fig, units * nl * sizeof *f);
    if (f)
        r->batch_fig = f;
    int *o = ss_realloc(r->batch_ok, units * sizeof *o);
    if (o)
        r->batch_ok = o;
    if (!v || !m || !f || !o)
        return nomem(err);
    if (r->n_tols > 0) {
        size_t nt = (size_t)r->trials * (nl + 1);
        double *y = ss_realloc(r->batch_yield, (size_t)n * sizeof *y);
        if (y)
            r->batch_yield = y;
        long *lf = ss_realloc(r->batch_lfail, (size_t)n * (nl + 1) * sizeof *lf);
        if (lf)
            r->batch_lfail = lf;
        int *mc = ss_realloc(r->mc_cand, (size_t)n * sizeof *mc);
        if (mc)
            r->mc_cand = mc;
        unsigned char *mf = ss_realloc(r->mc_fail, (size_t)n * nt);
        if (mf)
            r->mc_fail = mf;
        if (!y || !lf || !mc || !mf)
            return nomem(err);
        for (int c = 0; c < n; c++)
            r->batch_yield[c] = SS_NAN;
    }
    r->cap_batch = n;
    return SS_OK;
}

/* ---- the objective ------------------------------------------------------------------------ */

/* Candidate c of the batch: the smallest margin over every limit and corner (*which: its unit
 * offset, corner * n_limits + limit) and the objective: that margin plus a thousandth of the
 * mean margin (each capped at 1), which tells apart candidates whose worst margin is equal. */
static double objective(const ss_refine *r, int c, double *min_out, int *which)
{
    int per = r->n_corners * r->limits->n;
    const double *m = r->batch_marg + (size_t)c * (size_t)per;
    double mn = HUGE_VAL, sum = 0.0;
    int at = 0;
    for (int i = 0; i < per; i++) {
        if (m[i] < mn) {
            mn = m[i];
            at = i;
        }
        sum += fmin(m[i], 1.0);
    }
    if (min_out)
        *min_out = mn;
    if (which)
        *which = at;
    double obj = mn + 1e-3 * sum / per;
    if (!r->scoring)
        return obj;
    /* the yield score: the yield first (steps of 1/trials), the margin objective within half a
     * step; a candidate without trials (it fails a limit at its nominal values) below every
     * one with them, ranked by its smallest margin */
    double y = r->batch_yield[c];
    if (isnan(y))
        return -2.0 + 1.0 / (1.0 - fmin(mn, 0.0));
    double o = fmax(obj, 0.0);
    return y + 0.5 / (double)r->trials * (o / (1.0 + o));
}

static void binding_label(const ss_refine *r, int which, char *buf, size_t len)
{
    int nl = r->limits->n;
    snprintf(buf, len, "%s at %s", r->limits->items[which % nl].quantity,
             r->corners[which / nl].name);
}

static double min_of(const ss_refine *r, const double *marg, int *which)
{
    int per = r->n_corners * r->limits->n;
    double mn = HUGE_VAL;
    *which = 0;
    for (int i = 0; i < per; i++)
        if (marg[i] < mn) {
            mn = marg[i];
            *which = i;
        }
    return mn;
}

/* A row of the path: the design whose margins are marg (n_corners x n_limits). */
static ss_status path_add_marg(ss_refine *r, int phase, const double *marg, ss_error *err)
{
    int which0;
    double mn0 = min_of(r, marg, &which0);
    /* within one phase, a row only for a step that raises the smallest margin by a
     * thousandth: the path shows the search, not every decimal (scoring by yield, every
     * step: each raised the yield score, whatever the margin did) */
    if (r->n_path > 0 && phase != 4 && !r->scoring) {
        const path_row *last = &r->path[r->n_path - 1];
        if (last->phase == phase && mn0 - last->min_margin < 1e-3)
            return SS_OK;
    }
    if (r->n_path == r->cap_path) {
        int ncap = r->cap_path ? 2 * r->cap_path : 64;
        path_row *np = ss_realloc(r->path, (size_t)ncap * sizeof *np);
        if (!np)
            return nomem(err);
        r->path = np;
        r->cap_path = ncap;
    }
    path_row *p = &r->path[r->n_path];
    int which;
    double mn = min_of(r, marg, &which);
    binding_label(r, which, p->binding, sizeof p->binding);
    p->step = r->n_path;
    p->phase = phase;
    p->candidates = (double)r->candidates;
    p->min_margin = mn;
    r->n_path++;
    return SS_OK;
}

static ss_status path_add(ss_refine *r, int phase, int c, ss_error *err)
{
    size_t per = (size_t)r->n_corners * (size_t)r->limits->n;
    return path_add_marg(r, phase, r->batch_marg + (size_t)c * per, err);
}

/* Keeps candidate c of the batch as the best so far when it is better. 1 when it was kept. */
static int consider(ss_refine *r, int c)
{
    double mn;
    double obj = objective(r, c, &mn, NULL);
    if (r->best_vals && obj <= r->best_obj)
        return 0;
    size_t per = (size_t)r->n_corners * (size_t)r->limits->n;
    memcpy(r->best_vals, r->batch_vals + (size_t)c * (size_t)r->n_free,
           (size_t)r->n_free * sizeof *r->best_vals);
    memcpy(r->best_marg, r->batch_marg + (size_t)c * per, per * sizeof *r->best_marg);
    memcpy(r->best_fig, r->batch_fig + (size_t)c * per, per * sizeof *r->best_fig);
    memcpy(r->best_ok, r->batch_ok + (size_t)c * (size_t)r->n_corners,
           (size_t)r->n_corners * sizeof *r->best_ok);
    r->best_obj = obj;
    r->best_min = mn;
    if (r->n_tols > 0) {
        int nl = r->limits->n;
        r->best_yield = r->scoring ? r->batch_yield[c] : SS_NAN;
        if (r->scoring && !isnan(r->best_yield))
            memcpy(r->best_lfail, r->batch_lfail + (size_t)c * (size_t)(nl + 1),
                   (size_t)(nl + 1) * sizeof *r->best_lfail);
    }
    return 1;
}

/* Gives the trials to the batch's candidates cand[0 .. m-1]: batch_yield and batch_lfail. */
static ss_status run_trials(ss_refine *r, const int *cand, int m, ss_error *err)
{
    if (m == 0)
        return SS_OK;
    int nl = r->limits->n;
    memcpy(r->mc_cand, cand, (size_t)m * sizeof *cand);
    r->n_mc = m;
    r->batch_kind = 1;
    double t0 = now_s();
    ss_status st = run_batch(r, err);
    r->mc_seconds += now_s() - t0;
    r->batch_kind = 0;
    if (st != SS_OK)
        return st;
    for (int j = 0; j < m; j++) {
        long *lf = r->batch_lfail + (size_t)cand[j] * (size_t)(nl + 1);
        memset(lf, 0, (size_t)(nl + 1) * sizeof *lf);
        long pass = 0;
        for (long t = 0; t < r->trials; t++) {
            const unsigned char *f =
                r->mc_fail + ((size_t)j * (size_t)r->trials + (size_t)t) * (size_t)(nl + 1);
            int ok = 1;
            for (int i = 0; i <= nl; i++) {
                lf[i] += f[i];
                ok &= !f[i];
            }
            pass += ok;
        }
        r->batch_yield[cand[j]] = (double)pass / (double)r->trials;
    }
    return SS_OK;
}

/* Screening: the candidates of the batch meeting every limit at their nominal values get the
 * trials; the others keep no yield (objective() ranks them below). */
static ss_status score_batch(ss_refine *r, ss_error *err)
{
    if (!r->scoring)
        return SS_OK;
    int m = 0;
    int *pass = ss_alloc((size_t)(r->n_batch + 1) * sizeof *pass);
    if (!pass)
        return nomem(err);
    for (int c = 0; c < r->n_batch; c++) {
        double mn;
        objective(r, c, &mn, NULL);
        r->batch_yield[c] = SS_NAN;
        if (mn >= 0.0)
            pass[m++] = c;
    }
    ss_status st = run_trials(r, pass, m, err);
    ss_free(pass);
    return st;
}

static void report_progress(ss_refine *r)
{
    if (r->progress)
        r->progress(r->progress_ctx, r->candidates, r->budget);
}

/* ---- phase 1: Nelder-Mead on log values ------------------------------------------------- */

typedef struct nm_state {
    int n;
    double *x;   /* (n + 1) x n vertices, log values */
    double *f;   /* their objectives, maximised */
    double *lo, *hi;
} nm_state;

/* Evaluates the log-value points pts[0 .. m-1] (each n long) as one batch; objectives into f. */
static ss_status eval_logs(ss_refine *r, const double *pts, int m, double *f, int phase,
                           ss_error *err)
{
    ss_status st = batch_reserve(r, m, err);
    if (st != SS_OK)
        return st;
    int n = r->n_free;
    for (int c = 0; c < m; c++)
        for (int i = 0; i < n; i++)
            r->batch_vals[c * n + i] = exp(pts[c * n + i]);
    r->n_batch = m;
    if ((st = run_batch(r, err)) != SS_OK)
        return st;
    for (int c = 0; c < m; c++) {
        f[c] = objective(r, c, NULL, NULL);
        if (consider(r, c) && (st = path_add(r, phase, c, err)) != SS_OK)
            return st;
    }
    report_progress(r);
    return SS_OK;
}

static void clamp_point(const nm_state *s, double *p)
{
    for (int i = 0; i < s->n; i++)
        p[i] = fmin(fmax(p[i], s->lo[i]), s->hi[i]);
}

/* Vertex order: best (largest f) first; ties keep their order (a stable insertion sort). */
static void nm_sort(nm_state *s, double *tmp)
{
    int n = s->n;
    for (int a = 1; a <= n; a++) {
        double fa = s->f[a];
        memcpy(tmp, s->x + a * n, (size_t)n * sizeof *tmp);
        int b = a - 1;
        while (b >= 0 && s->f[b] < fa) {
            s->f[b + 1] = s->f[b];
            memcpy(s->x + (b + 1) * n, s->x + b * n, (size_t)n * sizeof *tmp);
            b--;
        }
        s->f[b + 1] = fa;
        memcpy(s->x + (b + 1) * n, tmp, (size_t)n * sizeof *tmp);
    }
}

/* Nelder-Mead (reflection 1, expansion 2, contraction 1/2, shrink 1/2) maximising the
 * objective from start (log values), within the box, for at most max_evals candidates.
 * best_out gets the best vertex. */
static ss_status nelder_mead(ss_refine *r, nm_state *s, const double *start, long max_evals,
                             double *best_out, ss_error *err)
{
    int n = s->n;
    double *work = ss_alloc((size_t)(5 * n + 2) * sizeof *work);
    if (!work)
        return nomem(err);
    double *cen = work, *xr = work + n, *xe = work + 2 * n, *xc = work + 3 * n,
           *tmp = work + 4 * n;
    long evals = 0;
    /* the first simplex: the start and a step of a fifth of each range (towards the side
     * with room) */
    for (int v = 0; v <= n; v++) {
        memcpy(s->x + v * n, start, (size_t)n * sizeof *start);
        if (v > 0) {
            int i = v - 1;
            double step = 0.2 * (s->hi[i] - s->lo[i]);
            s->x[v * n + i] += start[i] + step <= s->hi[i] ? step : -step;
        }
    }
    ss_status st = eval_logs(r, s->x, n + 1, s->f, 1, err);
    evals += n + 1;
    while (st == SS_OK && evals + 2 <= max_evals) {
        nm_sort(s, tmp);
        /* converged: the vertices' objectives agree and the simplex is small */
        double size = 0.0;
        for (int v = 1; v <= n; v++)
            for (int i = 0; i < n; i++)
                size = fmax(size, fabs(s->x[v * n + i] - s->x[i]));
        if (fabs(s->f[0] - s->f[n]) < 1e-6 && size < 1e-3)
            break;
        if (size < 1e-4)
            break;
        for (int i = 0; i < n; i++) {
            double sum = 0.0;
            for (int v = 0; v < n; v++)
                sum += s->x[v * n + i];
            cen[i] = sum / n;
        }
        const double *worst = s->x + n * n;
        for (int i = 0; i < n; i++)
            xr[i] = cen[i] + (cen[i] - worst[i]);
        clamp_point(s, xr);
        double fr;
        if ((st = eval_logs(r, xr, 1, &fr, 1, err)) != SS_OK)
            break;
        evals++;
        if (fr > s->f[0]) {
            for (int i = 0; i < n; i++)
                xe[i] = cen[i] + 2.0 * (cen[i] - worst[i]);
            clamp_point(s, xe);
            double fe;
            if ((st = eval_logs(r, xe, 1, &fe, 1, err)) != SS_OK)
                break;
            evals++;
            if (fe > fr) {
                memcpy(s->x + n * n, xe, (size_t)n * sizeof *xe);
                s->f[n] = fe;
            } else {
                memcpy(s->x + n * n, xr, (size_t)n * sizeof *xr);
                s->f[n] = fr;
            }
            continue;
        }
        if (fr > s->f[n - 1]) {
            memcpy(s->x + n * n, xr, (size_t)n * sizeof *xr);
            s->f[n] = fr;
            continue;
        }
        /* contraction: outside when the reflection beat the worst, else inside */
        int outside = fr > s->f[n];
        for (int i = 0; i < n; i++)
            xc[i] = outside ? cen[i] + 0.5 * (xr[i] - cen[i]) : cen[i] + 0.5 * (worst[i] - cen[i]);
        double fc;
        if ((st = eval_logs(r, xc, 1, &fc, 1, err)) != SS_OK)
            break;
        evals++;
        if (fc > (outside ? fr : s->f[n])) {
            memcpy(s->x + n * n, xc, (size_t)n * sizeof *xc);
            s->f[n] = fc;
            continue;
        }
        /* shrink towards the best */
        for (int v = 1; v <= n; v++)
            for (int i = 0; i < n; i++)
                s->x[v * n + i] = s->x[i] + 0.5 * (s->x[v * n + i] - s->x[i]);
        if ((st = eval_logs(r, s->x + n, n, s->f + 1, 1, err)) != SS_OK)
            break;
        evals += n;
    }
    if (st == SS_OK) {
        nm_sort(s, tmp);
        memcpy(best_out, s->x, (size_t)n * sizeof *best_out);
    }
    ss_free(work);
    return st;
}

/* ---- phase 2 and 3: the lattice --------------------------------------------------------- */

/* Evaluates lattice points idx[0 .. m-1] (each n indices); objectives into f. */
static ss_status eval_lattice(ss_refine *r, const long *idx, int m, double *f, int phase,
                              ss_error *err)
{
    ss_status st = batch_reserve(r, m, err);
    if (st != SS_OK)
        return st;
    int n = r->n_free;
    for (int c = 0; c < m; c++)
        for (int i = 0; i < n; i++)
            r->batch_vals[c * n + i] = eseries_lattice_value(r->fv[i].series, idx[c * n + i]);
    r->n_batch = m;
    if ((st = run_batch(r, err)) != SS_OK || (st = score_batch(r, err)) != SS_OK)
        return st;
    for (int c = 0; c < m; c++)
        f[c] = objective(r, c, NULL, NULL);
    report_progress(r);
    (void)phase;
    return SS_OK;
}

/* From the lattice point cur (objective *fcur): moves to the best neighbour while one is better:
 * every value a step up or down; when none is better, every pair of values a step each. The
 * best lattice point found is left in cur. */
static ss_status lattice_search(ss_refine *r, long *cur, double *fcur, ss_error *err)
{
    int n = r->n_free;
    int max_nb = 2 * n + 2 * n * (n - 1) + 1;
    long *nb = ss_alloc((size_t)max_nb * (size_t)n * sizeof *nb);
    double *f = ss_alloc((size_t)max_nb * sizeof *f);
    if (!nb || !f) {
        ss_free(nb);
        ss_free(f);
        return nomem(err);
    }
    ss_status st = SS_OK;
    int pairs = 0;
    while (st == SS_OK && r->candidates < r->budget) {
        int m = 0;
        if (!pairs) {
            for (int i = 0; i < n; i++)
                for (int d = -1; d <= 1; d += 2) {
                    long k = cur[i] + d;
                    if (k < r->fv[i].k_lo || k > r->fv[i].k_hi)
                        continue;
                    memcpy(nb + m * n, cur, (size_t)n * sizeof *cur);
                    nb[m * n + i] = k;
                    m++;
                }
        } else {
            for (int i = 0; i < n; i++)
                for (int j = i + 1; j < n; j++)
                    for (int di = -1; di <= 1; di += 2)
                        for (int dj = -1; dj <= 1; dj += 2) {
                            long ki = cur[i] + di, kj = cur[j] + dj;
                            if (ki < r->fv[i].k_lo || ki > r->fv[i].k_hi || kj < r->fv[j].k_lo ||
                                kj > r->fv[j].k_hi)
                                continue;
                            memcpy(nb + m * n, cur, (size_t)n * sizeof *cur);
                            nb[m * n + i] = ki;
                            nb[m * n + j] = kj;
                            m++;
                        }
        }
        if (m == 0) {
            if (pairs)
                break;
            pairs = 1;
            continue;
        }
        if ((st = eval_lattice(r, nb, m, f, 2 + pairs, err)) != SS_OK)
            break;
        int best = -1;
        for (int c = 0; c < m; c++)
            if (f[c] > *fcur + 1e-12 && (best < 0 || f[c] > f[best]))
                best = c;
        if (best < 0) {
            /* the target yield met at the single-step optimum: no pair steps (their cost is
             * trials x 2n(n-1) circuits) */
            if (pairs || (r->scoring && r->min_yield >= 0.0 && !isnan(r->best_yield) &&
                          r->best_yield >= r->min_yield))
                break;
            pairs = 1;
            continue;
        }
        memcpy(cur, nb + best * n, (size_t)n * sizeof *cur);
        *fcur = f[best];
        if (consider(r, best))
            st = path_add(r, 2 + pairs, best, err);
        pairs = 0;
    }
    ss_free(nb);
    ss_free(f);
    return st;
}

/* ---- the run ------------------------------------------------------------------------------ */

/* The tolerance trials, drawn once (common random numbers: every candidate is judged on the
 * same draws, so two candidates' yields differ by their values only), and which tolerance
 * names a free value. */
static ss_status draw_trials(ss_refine *r, ss_error *err)
{
    ss_status st = ss_study_set_trials(r->tol_study, r->trials, r->seed, err);
    if (st != SS_OK)
        return st;
    r->n_tols = study_n_tols(r->tol_study);
    r->trial_vals = ss_alloc((size_t)r->trials * (size_t)r->n_tols * sizeof *r->trial_vals);
    r->tol_free = arena_alloc(&r->arena, (size_t)r->n_tols * sizeof *r->tol_free);
    r->best_lfail = ss_alloc((size_t)(r->limits->n + 1) * sizeof *r->best_lfail);
    if (!r->trial_vals || !r->tol_free || !r->best_lfail)
        return nomem(err);
    memset(r->best_lfail, 0, (size_t)(r->limits->n + 1) * sizeof *r->best_lfail);
    for (long t = 0; t < r->trials; t++)
        study_trial_values(r->tol_study, t, r->trial_vals + (size_t)t * (size_t)r->n_tols);
    for (int i = 0; i < r->n_free; i++)
        r->free_tol[i] = -1;
    for (int t = 0; t < r->n_tols; t++) {
        r->tol_free[t] = -1;
        for (int i = 0; i < r->n_free; i++)
            if (strcmp(study_tol_name(r->tol_study, t), r->fv[i].name) == 0) {
                r->tol_free[t] = i;
                r->free_tol[i] = t;
            }
        if (r->tol_free[t] >= 0 && study_tol_nominal(r->tol_study, t) == 0.0)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "refine: tolerance on %s: its nominal value is 0, so it cannot "
                           "follow the candidate's value",
                           study_tol_name(r->tol_study, t));
    }
    r->best_yield = SS_NAN;
    return SS_OK;
}

static void stop_workers(ss_refine *r)
{
    if (!r->workers)
        return;
    if (r->sync_ready) {
        pthread_mutex_lock(&r->mu);
        r->quit = 1;
        pthread_cond_broadcast(&r->cv_work);
        pthread_mutex_unlock(&r->mu);
    }
    for (int t = 0; t < r->n_workers; t++) {
        worker *w = &r->workers[t];
        if (w->started)
            pthread_join(w->th, NULL);
        for (int k = 0; w->sv && k < r->n_corners; k++)
            ss_solver_destroy(&w->sv[k]);
        ss_free(w->sv);
        ss_free(w->op_vals);
        ss_free(w->trial_fig);
    }
    ss_free(r->workers);
    r->workers = NULL;
    if (r->sync_ready) {
        pthread_mutex_destroy(&r->mu);
        pthread_cond_destroy(&r->cv_work);
        pthread_cond_destroy(&r->cv_done);
        r->sync_ready = 0;
    }
}

static ss_status start_workers(ss_refine *r, ss_error *err)
{
    int nt = r->threads > 0 ? r->threads : ss_cpu_count();
    r->workers = ss_alloc((size_t)nt * sizeof *r->workers);
    if (!r->workers)
        return nomem(err);
    memset(r->workers, 0, (size_t)nt * sizeof *r->workers);
    r->n_workers = nt;
    if (pthread_mutex_init(&r->mu, NULL) != 0)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "cannot create a lock");
    pthread_cond_init(&r->cv_work, NULL);
    pthread_cond_init(&r->cv_done, NULL);
    r->sync_ready = 1;
    for (int t = 0; t < nt; t++) {
        worker *w = &r->workers[t];
        w->r = r;
        w->id = t;
        w->sv = ss_alloc((size_t)r->n_corners * sizeof *w->sv);
        w->op_vals = ss_alloc((size_t)(r->n_op_rows + 1) * sizeof *w->op_vals);
        w->trial_fig = ss_alloc((size_t)(r->limits->n + 1) * sizeof *w->trial_fig);
        if (!w->sv || !w->op_vals || !w->trial_fig)
            return nomem(err);
        memset(w->sv, 0, (size_t)r->n_corners * sizeof *w->sv);
        for (int k = 0; k < r->n_corners; k++) {
            ss_status st = corner_context(r, k, &w->sv[k], err);
            if (st != SS_OK)
                return st;
        }
    }
    for (int t = 1; t < nt; t++) {
        if (pthread_create(&r->workers[t].th, NULL, worker_main, &r->workers[t]) != 0)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "cannot start a worker thread");
        r->workers[t].started = 1;
    }
    return SS_OK;
}

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static ss_status add_binding(ss_refine *r, const char *label, ss_error *err)
{
    char **nb = ss_realloc(r->binding, (size_t)(r->n_binding + 1) * sizeof *nb);
    if (!nb)
        return nomem(err);
    r->binding = nb;
    r->binding[r->n_binding] = arena_strdup(&r->arena, label);
    if (!r->binding[r->n_binding])
        return nomem(err);
    r->n_binding++;
    return SS_OK;
}

static ss_status finish(ss_refine *r, ss_error *err)
{
    if (r->failed == r->circuits)
        return err_set(err, SS_ERR_NO_CONVERGENCE, r->ckt->file, 0,
                       "refine: no candidate design has an operating point (%ld tried); check "
                       "the supply, the bias and the .choose ranges",
                       r->candidates);
    /* the chosen design: the failing limits, by corner */
    int nl = r->limits->n;
    r->feasible = 1;
    ss_status st = SS_OK;
    for (int k = 0; k < r->n_corners && st == SS_OK; k++) {
        if (!r->best_ok[k]) {
            char label[200];
            snprintf(label, sizeof label, "no operating point at %s", r->corners[k].name);
            r->feasible = 0;
            st = add_binding(r, label, err);
            continue;
        }
        for (int i = 0; i < nl && st == SS_OK; i++)
            if (!(r->best_marg[k * nl + i] >= 0.0)) {
                char label[300];
                binding_label(r, k * nl + i, label, sizeof label);
                r->feasible = 0;
                st = add_binding(r, label, err);
            }
    }
    for (int i = 0; i < r->n_free; i++)
        r->fv[i].chosen = r->best_vals[i];
    return st;
}

ss_status ss_refine_run(ss_refine *r, ss_error *err)
{
    if (r->ran)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "refine: the search has run already");
    if (r->limits->n == 0)
        return err_set(err, SS_ERR_INPUT, r->ckt->file, 0,
                       "refine: no limits to meet; add .expect lines or a limits file");
    ss_status st = ss_limits_check_names(r->limits, r->nominal_sv, err);
    if (st == SS_OK && r->tol_study && (r->beta_set || r->temps_set || r->n_supply > 0))
        st = err_set(err, SS_ERR_INPUT, NULL, 0,
                     "refine: tolerances take the corners' place: give temp or the supply "
                     "a tolerance instead of --beta-range, --temps or --supply-tol");
    if (st == SS_OK && r->tol_study)
        st = draw_trials(r, err);
    if (st == SS_OK)
        st = build_corners(r, err);
    if (st == SS_OK)
        st = plan_limits(r, err);
    if (st != SS_OK)
        return st;
    r->ran = 1;
    int n = r->n_free;
    size_t per = (size_t)r->n_corners * (size_t)r->limits->n;
    r->best_vals = NULL;
    double *bv = ss_alloc((size_t)n * sizeof *bv);
    r->best_marg = ss_alloc(per * sizeof *r->best_marg);
    r->best_fig = ss_alloc(per * sizeof *r->best_fig);
    r->best_ok = ss_alloc((size_t)r->n_corners * sizeof *r->best_ok);
    nm_state s = {n, ss_alloc((size_t)(n + 1) * (size_t)n * sizeof(double)),
                  ss_alloc((size_t)(n + 1) * sizeof(double)), ss_alloc((size_t)n * sizeof(double)),
                  ss_alloc((size_t)n * sizeof(double))};
    double *start = ss_alloc((size_t)n * sizeof *start);
    double *nm_best = ss_alloc((size_t)n * sizeof *nm_best);
    long *cur = ss_alloc((size_t)n * sizeof *cur);
    if (!bv || !r->best_marg || !r->best_fig || !r->best_ok || !s.x || !s.f || !s.lo || !s.hi ||
        !start || !nm_best || !cur)
        st = nomem(err);
    if (st == SS_OK)
        st = start_workers(r, err);
    double t0 = now_s();
    if (st == SS_OK) {
        for (int i = 0; i < n; i++) {
            s.lo[i] = log(r->fv[i].lo);
            s.hi[i] = log(r->fv[i].hi);
            start[i] = fmin(fmax(log(r->fv[i].start), s.lo[i]), s.hi[i]);
        }
        /* the starting design itself first: the path's step 0 */
        double f0;
        r->best_obj = -HUGE_VAL;
        st = batch_reserve(r, n + 1, err);
        if (st == SS_OK) {
            for (int i = 0; i < n; i++)
                r->batch_vals[i] = exp(start[i]);
            r->n_batch = 1;
            st = run_batch(r, err);
        }
        if (st == SS_OK) {
            f0 = objective(r, 0, NULL, NULL);
            r->best_vals = bv;
            memcpy(r->best_vals, r->batch_vals, (size_t)n * sizeof *bv);
            memcpy(r->best_marg, r->batch_marg, per * sizeof *r->best_marg);
            memcpy(r->best_fig, r->batch_fig, per * sizeof *r->best_fig);
            memcpy(r->best_ok, r->batch_ok, (size_t)r->n_corners * sizeof *r->best_ok);
            r->best_obj = f0;
            objective(r, 0, &r->best_min, NULL);
            st = path_add(r, 0, 0, err);
        }
    }
    /* phase 1: Nelder-Mead, then once more from its best with a fresh simplex */
    long nm_budget = 150 + 60L * n;
    if (nm_budget > r->budget / 2)
        nm_budget = r->budget / 2;
    if (st == SS_OK)
        st = nelder_mead(r, &s, start, nm_budget / 2 + nm_budget / 4, nm_best, err);
    if (st == SS_OK && r->candidates < nm_budget) {
        for (int i = 0; i < n; i++)
            start[i] = log(r->best_vals[i]);
        st = nelder_mead(r, &s, start, nm_budget - r->candidates, nm_best, err);
    }
    /* phase 2 and 3: from the nearest lattice point of the best continuous design */
    if (st == SS_OK) {
        for (int i = 0; i < n; i++) {
            eseries_lattice_index(r->fv[i].series, r->best_vals[i], &cur[i]);
            cur[i] = cur[i] < r->fv[i].k_lo ? r->fv[i].k_lo
                     : cur[i] > r->fv[i].k_hi ? r->fv[i].k_hi
                                              : cur[i];
        }
        double fcur;
        r->scoring = r->n_tols > 0;
        st = eval_lattice(r, cur, 1, &fcur, 2, err);
        /* from here on only lattice points may be chosen */
        if (st == SS_OK) {
            r->best_obj = -HUGE_VAL;
            consider(r, 0);
            st = path_add(r, 2, 0, err);
        }
        if (st == SS_OK)
            st = lattice_search(r, cur, &fcur, err);
    }
    /* the chosen design's yield when screening gave it no trials */
    if (st == SS_OK && r->n_tols > 0 && r->best_vals && isnan(r->best_yield) &&
        (st = batch_reserve(r, 1, err)) == SS_OK) {
        memcpy(r->batch_vals, r->best_vals, (size_t)n * sizeof *bv);
        r->n_batch = 1;
        int zero = 0;
        st = run_trials(r, &zero, 1, err);
        if (st == SS_OK) {
            r->best_yield = r->batch_yield[0];
            memcpy(r->best_lfail, r->batch_lfail,
                   (size_t)(r->limits->n + 1) * sizeof *r->best_lfail);
        }
    }
    r->seconds = now_s() - t0;
    stop_workers(r);
    if (st == SS_OK)
        st = path_add_marg(r, 4, r->best_marg, err);
    if (st == SS_OK)
        st = finish(r, err);
    ss_free(s.x);
    ss_free(s.f);
    ss_free(s.lo);
    ss_free(s.hi);
    ss_free(start);
    ss_free(nm_best);
    ss_free(cur);
    if (!r->best_vals)
        ss_free(bv);
    return st;
}

/* ---- results ---------------------------------------------------------------------------- */

void ss_refine_get_stats(const ss_refine *r, ss_refine_stats *out)
{
    memset(out, 0, sizeof *out);
    out->n_free = r->n_free;
    out->n_corners = r->n_corners;
    out->n_limits = r->limits->n;
    out->threads = r->n_workers;
    out->candidates = r->candidates;
    out->circuits = r->circuits;
    out->failed_circuits = r->failed;
    out->seconds = r->seconds;
    out->min_margin = r->best_marg ? r->best_min : SS_NAN;
    if (r->best_marg && r->ran) {
        int which;
        out->min_margin = min_of(r, r->best_marg, &which);
    }
    out->feasible = r->feasible;
    out->trials = r->n_tols > 0 ? r->trials : 0;
    out->min_yield = r->min_yield;
    out->mc_candidates = r->mc_candidates;
    out->mc_seconds = r->mc_seconds;
    out->yield = out->yield_lo95 = out->yield_hi95 = SS_NAN;
    if (r->n_tols > 0 && r->ran && !isnan(r->best_yield)) {
        out->yield = r->best_yield;
        out->passed = (long)llround(r->best_yield * (double)r->trials);
        ss_wilson_interval(out->passed, r->trials, 1.959963984540054, &out->yield_lo95,
                           &out->yield_hi95);
    }
}

const char *ss_refine_binding(const ss_refine *r, int i)
{
    return r && i >= 0 && i < r->n_binding ? r->binding[i] : NULL;
}

static ss_table *new_table(int n, const char *label, const char *const *cols)
{
    ss_table *t = table_create(n, label);
    for (int j = 0; t && j < n; j++)
        if (table_set_col(t, j, cols[j]) != 0)
            ss_table_destroy(&t);
    return t;
}

ss_status ss_refine_tables(const ss_refine *r, ss_table **out_design, ss_table **out_margins,
                           ss_table **out_path, ss_error *err)
{
    if (!r->ran || !r->best_vals)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "refine: the search has not run");
    static const char *const dcols[] = {"start", "chosen", "series", "lo", "hi"};
    static const char *const pcols[] = {"step", "phase", "candidates", "min_margin"};
    int nl = r->limits->n, nc = r->n_corners;
    int n_mcols = 2 + 2 * nc + 2;
    const char **mcols = ss_alloc((size_t)n_mcols * sizeof *mcols);
    char(*names)[128] = ss_alloc((size_t)(2 * nc) * sizeof *names);
    ss_table *d = new_table(5, "name", dcols);
    ss_table *p = new_table(4, "binding", pcols);
    ss_table *m = NULL;
    int bad = !mcols || !names || !d || !p;
    if (!bad) {
        mcols[0] = "lower";
        mcols[1] = "upper";
        for (int k = 0; k < nc; k++) {
            snprintf(names[2 * k], sizeof names[0], "value_%s", r->corners[k].name);
            snprintf(names[2 * k + 1], sizeof names[0], "margin_%s", r->corners[k].name);
            mcols[2 + 2 * k] = names[2 * k];
            mcols[3 + 2 * k] = names[2 * k + 1];
        }
        mcols[2 + 2 * nc] = "margin_min";
        mcols[3 + 2 * nc] = "pass";
        m = new_table(n_mcols, "limit", mcols);
        bad = !m;
    }
    for (int i = 0; !bad && i < r->n_free; i++) {
        double *row = table_add_row(d, r->fv[i].name);
        if (!row) {
            bad = 1;
            break;
        }
        row[0] = r->fv[i].start;
        row[1] = r->fv[i].chosen;
        row[2] = r->fv[i].series;
        row[3] = r->fv[i].lo;
        row[4] = r->fv[i].hi;
    }
    for (int i = 0; !bad && i < nl; i++) {
        const limit *lim = &r->limits->items[i];
        double *row = table_add_row(m, lim->quantity);
        if (!row) {
            bad = 1;
            break;
        }
        row[0] = isfinite(lim->lo) ? lim->lo : SS_NAN;
        row[1] = isfinite(lim->hi) ? lim->hi : SS_NAN;
        double mn = HUGE_VAL;
        for (int k = 0; k < nc; k++) {
            double mg = r->best_marg[k * nl + i];
            row[2 + 2 * k] = r->best_fig[k * nl + i];
            row[3 + 2 * k] = r->best_ok[k] && mg > MARGIN_NO_SOLUTION ? mg : SS_NAN;
            mn = fmin(mn, mg);
        }
        row[2 + 2 * nc] = mn > MARGIN_NO_SOLUTION ? mn : SS_NAN;
        row[3 + 2 * nc] = mn >= 0.0;
    }
    for (int i = 0; !bad && i < r->n_path; i++) {
        double *row = table_add_row(p, r->path[i].binding);
        if (!row) {
            bad = 1;
            break;
        }
        row[0] = r->path[i].step;
        row[1] = r->path[i].phase;
        row[2] = r->path[i].candidates;
        row[3] = r->path[i].min_margin > MARGIN_NO_SOLUTION ? r->path[i].min_margin : SS_NAN;
    }
    ss_free(mcols);
    ss_free(names);
    if (bad) {
        ss_table_destroy(&d);
        ss_table_destroy(&m);
        ss_table_destroy(&p);
        return nomem(err);
    }
    if (out_design)
        *out_design = d;
    else
        ss_table_destroy(&d);
    if (out_margins)
        *out_margins = m;
    else
        ss_table_destroy(&m);
    if (out_path)
        *out_path = p;
    else
        ss_table_destroy(&p);
    return SS_OK;
}

/* v in the netlist's SI notation, the fewest digits that read back as v: 4.7k, 100n, 1meg. */
static void si_text(double v, char *buf, size_t len)
{
    static const struct {
        double scale;
        const char *suffix;
    } SI[] = {{1e12, "t"}, {1e9, "g"}, {1e6, "meg"}, {1e3, "k"}, {1.0, ""},
              {1e-3, "m"}, {1e-6, "u"}, {1e-9, "n"}, {1e-12, "p"}, {1e-15, "f"}};
    for (size_t i = 0; i < sizeof SI / sizeof SI[0]; i++)
        if (fabs(v) >= SI[i].scale * 0.9999999 || i + 1 == sizeof SI / sizeof SI[0]) {
            for (int digits = 1; digits <= 17; digits++) {
                snprintf(buf, len, "%.*g%s", digits, v / SI[i].scale, SI[i].suffix);
                double back;
                if (!strchr(buf, 'e') && value_scan(buf, &back) > 0 && back == v)
                    return;
            }
            snprintf(buf, len, "%.17g", v);
            return;
        }
}

ss_status ss_refine_write_netlist(const ss_refine *r, const char *path, ss_error *err)
{
    if (!r->ran || !r->best_vals)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "refine: the search has not run");
    ss_strbuf in = {0}, out = {0};
    int sys_errno;
    int rc = strbuf_read_file(&in, r->netlist, (size_t)1 << 30, &sys_errno);
    if (rc != SS_READ_OK) {
        strbuf_clear(&in);
        return err_set(err, SS_ERR_IO, r->netlist, 0, "cannot read the netlist again: %s",
                       strbuf_read_error_text(rc, sys_errno));
    }
    /* the free values' tokens in the order they stand in the text */
    int order[REFINE_MAX_FREE];
    for (int i = 0; i < r->n_free; i++)
        order[i] = i;
    for (int a = 1; a < r->n_free; a++)
        for (int b = a; b > 0 && r->fv[order[b]].tok_off < r->fv[order[b - 1]].tok_off; b--) {
            int t = order[b];
            order[b] = order[b - 1];
            order[b - 1] = t;
        }
    size_t at = 0;
    int bad = 0;
    for (int j = 0; j < r->n_free && !bad; j++) {
        const free_value *f = &r->fv[order[j]];
        if (f->tok_off + f->tok_len > in.len || f->tok_off < at) {
            bad = 2;
            break;
        }
        char v[64];
        si_text(f->chosen, v, sizeof v);
        strbuf_append(&out, in.data + at, f->tok_off - at);
        strbuf_append(&out, v, strlen(v));
        at = f->tok_off + f->tok_len;
    }
    if (!bad && in.len > at)
        strbuf_append(&out, in.data + at, in.len - at);
    if (!bad && out.failed)
        bad = 1;
    strbuf_clear(&in);
    if (bad) {
        strbuf_clear(&out);
        return bad == 2 ? err_set(err, SS_ERR_IO, r->netlist, 0,
                                  "the netlist changed while refine ran; run it again")
                        : nomem(err);
    }
    ss_status st = output_write_atomic(path, out.data ? out.data : "", out.len, err);
    strbuf_clear(&out);
    return st;
}

void ss_refine_destroy(ss_refine **pr)
{
    if (!pr || !*pr)
        return;
    ss_refine *r = *pr;
    stop_workers(r);
    ss_solver_destroy(&r->nominal_sv);
    ss_circuit_destroy(&r->ckt);
    ss_limits_destroy(&r->limits);
    ss_free(r->batch_vals);
    ss_free(r->batch_marg);
    ss_free(r->batch_fig);
    ss_free(r->batch_ok);
    ss_free(r->best_vals);
    ss_free(r->best_marg);
    ss_free(r->best_fig);
    ss_free(r->best_ok);
    ss_free(r->path);
    ss_free(r->binding);
    ss_study_destroy(&r->tol_study);
    ss_free(r->trial_vals);
    ss_free(r->mc_cand);
    ss_free(r->mc_fail);
    ss_free(r->batch_yield);
    ss_free(r->batch_lfail);
    ss_free(r->best_lfail);
    arena_clear(&r->arena);
    ss_free(r);
    *pr = NULL;
}

void ss_wilson_interval(long k, long n, double z, double *lo, double *hi)
{
    if (n <= 0) {
        *lo = *hi = SS_NAN;
        return;
    }
    double p = (double)k / (double)n, nn = (double)n, z2 = z * z;
    double den = 1.0 + z2 / nn;
    double mid = (p + z2 / (2.0 * nn)) / den;
    double half = z / den * sqrt(p * (1.0 - p) / nn + z2 / (4.0 * nn * nn));
    *lo = fmax(0.0, mid - half);
    *hi = fmin(1.0, mid + half);
}

ss_status ss_refine_yield_table(const ss_refine *r, ss_table **out, ss_error *err)
{
    *out = NULL;
    if (r->n_tols == 0 || !r->ran || isnan(r->best_yield))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "refine: no yield: the search ran without tolerances");
    static const char *const cols[] = {"trials", "failing", "passing", "pass_fraction",
                                       "wilson_lo95", "wilson_hi95"};
    int nl = r->limits->n;
    ss_table *t = new_table(6, "limit", cols);
    if (!t)
        return nomem(err);
    for (int i = 0; i < nl + 2; i++) {
        long failing;
        const char *label;
        if (i == 0) {
            failing = r->trials - (long)llround(r->best_yield * (double)r->trials);
            label = "all_limits";
        } else if (i <= nl) {
            failing = r->best_lfail[i - 1];
            label = r->limits->items[i - 1].quantity;
        } else {
            failing = r->best_lfail[nl];
            label = "unsolved";
        }
        double *row = table_add_row(t, label);
        if (!row) {
            ss_table_destroy(&t);
            return nomem(err);
        }
        double lo, hi;
        ss_wilson_interval(r->trials - failing, r->trials, 1.959963984540054, &lo, &hi);
        row[0] = (double)r->trials;
        row[1] = (double)failing;
        row[2] = (double)(r->trials - failing);
        row[3] = (double)(r->trials - failing) / (double)r->trials;
        row[4] = lo;
        row[5] = hi;
    }
    *out = t;
    return SS_OK;
}
