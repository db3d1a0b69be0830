/* Limits on figures: `QUANTITY [@ FREQ] RELATION` lines from a file, text or a netlist's
 * .expect lines. Relations: `LO .. HI`, `>= LO`, `<= HI`, `= NOMINAL +- TOL[%]`. Judging
 * figures against them is check.c's. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "netlist/netlist.h"
#include "study/study.h"
#include "util/sha256.h"

/* A limits file holds a line per figure: far below this (docs/checks.md) */
#define LIMITS_MAX_FILE_BYTES ((size_t)64 << 20)
#define LIMITS_MAX_FILE_TEXT "64 MiB"

static const char *const POINT_QUANTITIES[] = {"gain", "gain_db", "phase_deg", "zin_ohm",
                                               "zout_ohm"};

int study_is_point_quantity(const char *base)
{
    for (size_t i = 0; i < sizeof POINT_QUANTITIES / sizeof POINT_QUANTITIES[0]; i++)
        if (strcmp(base, POINT_QUANTITIES[i]) == 0)
            return 1;
    return 0;
}

ss_status ss_limits_create(ss_limits **out, ss_error *err)
{
    ss_limits *l = ss_alloc(sizeof *l);
    if (!l)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    *out = l;
    return SS_OK;
}

void ss_limits_destroy(ss_limits **pl)
{
    if (!pl || !*pl)
        return;
    ss_free((*pl)->items);
    arena_clear(&(*pl)->arena);
    ss_free(*pl);
    *pl = NULL;
}

int ss_limits_count(const ss_limits *l) { return l ? l->n : 0; }

static void skip_ws(const char **p)
{
    while (isspace((unsigned char)**p))
        (*p)++;
}

/* A value: number with SI suffix (and unit letters), optionally signed. */
static int scan_value(const char **p, double *out)
{
    skip_ws(p);
    size_t n = value_scan(*p, out);
    if (n == 0 || !isfinite(*out))
        return -1;
    /* value_scan takes unit letters; a following ".." belongs to the range */
    *p += n;
    return 0;
}

/* The quantity of a limit line at *pp, lower case, and its `@ FREQ` when given, into lim (base,
 * at_freq, freq_hz, quantity); on success *pp is past them. */
static ss_status scan_quantity(const char **pp, limit *lim, const char *file, int line,
                               ss_error *err)
{
    const char *p = *pp;
    /* the quantity: up to whitespace, '@' or a relation sign outside parentheses */
    size_t q = 0;
    int depth = 0;
    while (*p && q + 1 < sizeof lim->base) {
        char c = *p;
        if (c == '(')
            depth++;
        else if (c == ')')
            depth--;
        else if (depth <= 0 && (isspace((unsigned char)c) || c == '@' || c == '<' || c == '>' ||
                                c == '='))
            break;
        lim->base[q++] = (char)tolower((unsigned char)c);
        p++;
    }
    lim->base[q] = '\0';
    if (q == 0)
        return err_set(err, SS_ERR_INPUT, file, line, "limit: missing the quantity");
    if (depth != 0 || (*p && !isspace((unsigned char)*p) && *p != '@' && *p != '<' &&
                       *p != '>' && *p != '='))
        return err_set(err, SS_ERR_INPUT, file, line,
                       "limit on %s: unbalanced parentheses or a name too long", lim->base);
    /* abs(QUANTITY): the bounds are on the magnitude (a PNP's vce(q) >= 3 as abs(vce(q)) >= 3) */
    if (strncmp(lim->base, "abs(", 4) == 0 || strcmp(lim->base, "abs") == 0) {
        size_t n = strlen(lim->base);
        if (n < 6 || lim->base[n - 1] != ')')
            return err_set(err, SS_ERR_INPUT, file, line,
                           "limit on %s: write abs(QUANTITY), a figure's name inside the "
                           "parentheses (abs(vce(q1)) >= 3)",
                           lim->base);
        memmove(lim->base, lim->base + 4, n - 5);
        lim->base[n - 5] = '\0';
        /* the inner text must be one figure name with its own parentheses balanced */
        int d = 0, ok = 1;
        for (const char *c = lim->base; *c && ok; c++) {
            d += *c == '(' ? 1 : *c == ')' ? -1 : 0;
            ok = d >= 0;
        }
        if (!ok || d != 0 || strncmp(lim->base, "abs(", 4) == 0)
            return err_set(err, SS_ERR_INPUT, file, line,
                           "limit on abs(%s): write abs(QUANTITY), one figure's name inside the "
                           "parentheses (abs(vce(q1)) >= 3)",
                           lim->base);
        lim->magnitude = 1;
    }
    skip_ws(&p);
    if (*p == '@') {
        p++;
        if (scan_value(&p, &lim->freq_hz) != 0 || !(lim->freq_hz > 0.0))
            return err_set(err, SS_ERR_INPUT, file, line,
                           "limit on %s: '@' needs a positive frequency", lim->base);
        if (!study_is_point_quantity(lim->base))
            return err_set(err, SS_ERR_INPUT, file, line,
                           "limit on %s: only gain, gain_db, phase_deg, zin_ohm and zout_ohm "
                           "can be taken at a frequency",
                           lim->base);
        lim->at_freq = 1;
        skip_ws(&p);
    }
    if (lim->at_freq)
        snprintf(lim->quantity, sizeof lim->quantity, "%s@%.9g", lim->base, lim->freq_hz);
    else
        snprintf(lim->quantity, sizeof lim->quantity, "%s", lim->base);
    if (lim->magnitude && lim->at_freq)
        snprintf(lim->label, sizeof lim->label, "abs(%s)@%.9g", lim->base, lim->freq_hz);
    else
        snprintf(lim->label, sizeof lim->label, lim->magnitude ? "abs(%s)" : "%s", lim->quantity);
    *pp = p;
    return SS_OK;
}

/* The relation at *pp into lim->lo and lim->hi: LO .. HI, >= LO, <= HI or = NOMINAL +- TOL[%];
 * on success *pp is past it. */
static ss_status scan_bounds(const char **pp, limit *lim, const char *file, int line,
                             ss_error *err)
{
    const char *p = *pp;
    const char *rel = p;
    if (*p == '>' || *p == '<') {
        /* `>= x` and `> x` both mean a lower bound (the netlist tokenizer may have split the
         * '=' off: `> = x`) */
        char sign = *p++;
        skip_ws(&p);
        if (*p == '=')
            p++;
        if (scan_value(&p, sign == '>' ? &lim->lo : &lim->hi) != 0)
            goto bad;
    } else if (*p == '=') {
        p++;
        double nominal, tol;
        if (scan_value(&p, &nominal) != 0)
            goto bad;
        skip_ws(&p);
        if (strncmp(p, "+-", 2) != 0 && strncmp(p, "\xc2\xb1", 2) != 0)
            goto bad;
        p += 2;
        if (scan_value(&p, &tol) != 0 || tol < 0.0)
            goto bad;
        skip_ws(&p);
        if (*p == '%') {
            tol = fabs(nominal) * tol / 100.0;
            p++;
        }
        lim->lo = nominal - tol;
        lim->hi = nominal + tol;
    } else {
        if (scan_value(&p, &lim->lo) != 0)
            goto bad;
        skip_ws(&p);
        if (strncmp(p, "..", 2) != 0)
            goto bad;
        p += 2;
        if (scan_value(&p, &lim->hi) != 0)
            goto bad;
        if (lim->hi < lim->lo)
            return err_set(err, SS_ERR_INPUT, file, line,
                           "limit on %s: the upper bound %g is below the lower bound %g",
                           lim->label, lim->hi, lim->lo);
    }
    *pp = p;
    return SS_OK;
bad:
    return err_set(err, SS_ERR_INPUT, file, line,
                   "limit on %s: cannot read '%s' (write LO .. HI, >= LO, <= HI or "
                   "= NOMINAL +- TOL[%%])",
                   lim->label, rel);
}

ss_status limits_parse_line(ss_limits *l, const char *text, const char *file, int line,
                            ss_error *err)
{
    const char *p = text;
    skip_ws(&p);
    limit lim;
    memset(&lim, 0, sizeof lim);
    lim.lo = -HUGE_VAL;
    lim.hi = HUGE_VAL;
    ss_status st = scan_quantity(&p, &lim, file, line, err);
    if (st == SS_OK)
        st = scan_bounds(&p, &lim, file, line, err);
    if (st != SS_OK)
        return st;
    skip_ws(&p);
    if (*p)
        return err_set(err, SS_ERR_INPUT, file, line, "limit on %s: unexpected '%s' at the end",
                       lim.label, p);
    lim.file = file;
    lim.line = line;
    if (l->n == l->cap) {
        int ncap = l->cap ? l->cap * 2 : 16;
        limit *ni = ss_realloc(l->items, (size_t)ncap * sizeof *ni);
        if (!ni)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        l->items = ni;
        l->cap = ncap;
    }
    l->items[l->n++] = lim;
    return SS_OK;
}

ss_status ss_limits_add_text(ss_limits *l, const char *text, const char *name, ss_error *err)
{
    /* a digest of every text added, chained: what a study's identity records of its limits */
    {
        sha256_ctx c;
        unsigned char d[32];
        sha256_init(&c);
        sha256_update(&c, l->sha256, strlen(l->sha256));
        sha256_update(&c, text, strlen(text));
        sha256_final(&c, d);
        sha256_hex(d, l->sha256);
    }
    const char *file = arena_strdup(&l->arena, name ? name : "<limits>");
    if (!file)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    int line = 0;
    const char *p = text;
    while (*p) {
        line++;
        const char *end = strchr(p, '\n');
        size_t n = end ? (size_t)(end - p) : strlen(p);
        char buf[1024];
        if (n >= sizeof buf)
            return err_set(err, SS_ERR_LIMIT, file, line, "limit line longer than %zu bytes",
                           sizeof buf - 1);
        memcpy(buf, p, n);
        buf[n] = '\0';
        /* comments: '#', '*' at the start, ';' anywhere */
        char *semi = strchr(buf, ';');
        if (semi)
            *semi = '\0';
        char *s = buf;
        while (isspace((unsigned char)*s))
            s++;
        size_t len = strlen(s);
        while (len > 0 && isspace((unsigned char)s[len - 1]))
            s[--len] = '\0';
        if (*s && *s != '#' && *s != '*') {
            for (char *c = s; *c; c++)
                if ((unsigned char)*c < 0x20 && *c != '\t')
                    return err_set(err, SS_ERR_INPUT, file, line,
                                   "unexpected control character: not a text limits file");
            ss_status st = limits_parse_line(l, s, file, line, err);
            if (st != SS_OK)
                return st;
        }
        p += n;
        if (*p == '\n')
            p++;
    }
    return SS_OK;
}

ss_status ss_limits_add_file(ss_limits *l, const char *path, ss_error *err)
{
    ss_strbuf b = {0};
    int sys_errno;
    int rc = strbuf_read_file(&b, path, LIMITS_MAX_FILE_BYTES, &sys_errno);
    if (rc != SS_READ_OK)
        strbuf_clear(&b);
    if (rc == SS_READ_NOMEM)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (rc == SS_READ_TOO_LARGE)
        return err_set(err, SS_ERR_LIMIT, path, 0, "limits file larger than %s",
                       LIMITS_MAX_FILE_TEXT);
    if (rc == SS_READ_OPEN || rc == SS_READ_NOT_REGULAR)
        return err_set(err, SS_ERR_IO, path, 0, "cannot open limits file: %s",
                       strbuf_read_error_text(rc, sys_errno));
    if (rc != SS_READ_OK)
        return err_set(err, SS_ERR_IO, path, 0, "read error: %s",
                       strbuf_read_error_text(rc, sys_errno));
    if (b.data && memchr(b.data, '\0', b.len)) {
        strbuf_clear(&b);
        return err_set(err, SS_ERR_INPUT, path, 0, "not a text limits file (NUL byte)");
    }
    ss_status st = ss_limits_add_text(l, b.data ? b.data : "", path, err);
    strbuf_clear(&b);
    return st;
}

ss_status ss_limits_add_circuit(ss_limits *l, const ss_circuit *ckt, ss_error *err)
{
    for (int i = 0; i < ckt->n_study_lines; i++) {
        const struct study_line *sl = &ckt->study_lines[i];
        if (sl->is_tolerance || sl->is_choice)
            continue;
        ss_status st = limits_parse_line(l, sl->text, sl->file, sl->line, err);
        if (st != SS_OK)
            return st;
    }
    return SS_OK;
}
