/* Netlist reader: files and .include, logical lines (the title, comments, '+' continuations,
 * .end) and their tokens. What the lines mean is left to the rest of the parser. */
#define _DEFAULT_SOURCE /* realpath */
#include <ctype.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "netlist/parser_internal.h"

/* netlist_token_next itself; tokenize has it inlined (a call per field cost the parse of a
 * large netlist 3 % more instructions). */
static inline netlist_token token_next(const char *text, size_t *pos, size_t *start,
                                       size_t *len)
{
    const char *s = text + *pos;
    while (*s && (isspace((unsigned char)*s) || *s == ','))
        s++;
    if (!*s) {
        *pos = (size_t)(s - text);
        return NETLIST_TOKEN_END;
    }
    const char *first = s;
    netlist_token found = NETLIST_TOKEN_OK;
    if (*s == '=') {
        s++;
    } else {
        int brace = 0, paren = 0;
        while (*s) {
            char c = *s;
            if (c == '{')
                brace++;
            else if (c == '}')
                brace--;
            else if (c == '(')
                paren++;
            else if (c == ')')
                paren--;
            else if (brace <= 0 && paren <= 0 &&
                     (isspace((unsigned char)c) || c == ',' || c == '='))
                break;
            s++;
        }
        if (brace > 0)
            found = NETLIST_TOKEN_OPEN_BRACE;
        else if (paren > 0)
            found = NETLIST_TOKEN_OPEN_PAREN;
    }
    *start = (size_t)(first - text);
    *len = (size_t)(s - first);
    *pos = (size_t)(s - text);
    return found;
}

netlist_token netlist_token_next(const char *text, size_t *pos, size_t *start, size_t *len)
{
    return token_next(text, pos, start, len);
}

/* Splits one logical line (already lower-cased where appropriate) into tokens with
 * netlist_token_next. */
ss_status tokenize(parser *ps, logline *ll, char *text)
{
    char *toks[NETLIST_MAX_TOKENS];
    int n = 0;
    size_t pos = 0, start, len;
    netlist_token found;
    while ((found = token_next(text, &pos, &start, &len)) != NETLIST_TOKEN_END) {
        if (n >= NETLIST_MAX_TOKENS)
            return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                           "line has more than %d fields", NETLIST_MAX_TOKENS);
        /* an unclosed field runs to the end of the line */
        if (found == NETLIST_TOKEN_OPEN_BRACE)
            return line_error(ps, ll, "missing '}' in '%s'", text + start);
        if (found == NETLIST_TOKEN_OPEN_PAREN)
            return line_error(ps, ll, "missing ')' in '%s'", text + start);
        char *t = arena_strndup(&ps->ckt->arena, text + start, len);
        if (!t)
            return nomem(ps);
        toks[n++] = t;
    }
    /* the token strings live with the circuit (names borrow them); the arrays of pointers to
     * them are only needed while parsing */
    ll->tok = arena_alloc_raw(&ps->scratch, (size_t)(n ? n : 1) * sizeof *ll->tok,
                              _Alignof(char *));
    if (!ll->tok)
        return nomem(ps);
    memcpy(ll->tok, toks, (size_t)n * sizeof *toks);
    ll->n_tok = n;
    return SS_OK;
}

/* Records an input file and the SHA-256 of the bytes about to be parsed (the run manifest's
 * record of what this circuit was read from). */
static ss_status note_input(parser *ps, const char *file, const char *text, size_t len)
{
    ss_circuit *ckt = ps->ckt;
    struct ckt_input *ni = ss_realloc(ckt->inputs, (size_t)(ckt->n_inputs + 1) * sizeof *ni);
    if (!ni)
        return nomem(ps);
    ckt->inputs = ni;
    ni[ckt->n_inputs].path = file;
    ss_sha256_hex(text, len, ni[ckt->n_inputs].sha256);
    ckt->n_inputs++;
    return SS_OK;
}

static char *dir_of(const char *path, char *buf, size_t len)
{
    const char *slash = strrchr(path, '/');
    if (!slash)
        snprintf(buf, len, ".");
    else
        snprintf(buf, len, "%.*s", (int)(slash - path), path);
    return buf;
}

ss_status read_file(parser *ps, const char *path, const logline *from, int is_top)
{
    /* compare canonical paths, so lib/../top.cir is recognised as top.cir */
    char canon[PATH_MAX];
    if (!realpath(path, canon))
        snprintf(canon, sizeof canon, "%s", path);
    for (int i = 0; i < ps->inc_depth; i++)
        if (strcmp(ps->inc_stack[i], canon) == 0)
            return line_error(ps, from, ".include of '%s' includes itself (cycle)", path);
    if (ps->inc_depth > NETLIST_MAX_INCLUDE_DEPTH)
        return err_set(ps->err, SS_ERR_LIMIT, from ? from->file : path, from ? from->line : 0,
                       ".include nested deeper than %d files", NETLIST_MAX_INCLUDE_DEPTH);
    /* one budget for the netlist and everything it includes */
    ss_strbuf b = {0};
    int sys_errno = 0;
    int rc = strbuf_read_file(&b, path, NETLIST_MAX_TEXT_BYTES - ps->text_bytes, &sys_errno);
    if (rc != SS_READ_OK) {
        strbuf_clear(&b);
        if (rc == SS_READ_NOMEM)
            return nomem(ps);
        if (rc == SS_READ_TOO_LARGE && from)
            return err_set(ps->err, SS_ERR_LIMIT, from->file, from->line,
                           "'%s': the netlist and its included files together would be larger "
                           "than %s",
                           path, NETLIST_MAX_TEXT_TEXT);
        if (rc == SS_READ_TOO_LARGE)
            return err_set(ps->err, SS_ERR_LIMIT, path, 0, "the netlist is larger than %s",
                           NETLIST_MAX_TEXT_TEXT);
        const char *why = strbuf_read_error_text(rc, sys_errno);
        if (rc == SS_READ_IO)
            return err_set(ps->err, SS_ERR_IO, path, 0, "read error: %s", why);
        if (from)
            return err_set(ps->err, SS_ERR_IO, from->file, from->line, "cannot open '%s': %s",
                           path, why);
        return err_set(ps->err, SS_ERR_IO, path, 0, "cannot open netlist: %s", why);
    }
    ps->text_bytes += b.len;
    const char *file = arena_strdup(&ps->ckt->arena, path);
    if (!file) {
        strbuf_clear(&b);
        return nomem(ps);
    }
    const char *canon_copy = arena_strdup(&ps->ckt->arena, canon);
    if (!canon_copy) {
        strbuf_clear(&b);
        return nomem(ps);
    }
    ss_status st = note_input(ps, file, b.data ? b.data : "", b.len);
    if (st != SS_OK) {
        strbuf_clear(&b);
        return st;
    }
    ps->inc_stack[ps->inc_depth++] = canon_copy;
    st = read_text(ps, b.data ? b.data : "", b.len, file, is_top);
    ps->inc_depth--;
    strbuf_clear(&b);
    return st;
}

static ss_status push_line(parser *ps, const char *file, int line_no, char *text)
{
    if (ps->n_lines == ps->cap_lines) {
        int ncap = ps->cap_lines ? ps->cap_lines * 2 : 256;
        logline *nl = ss_realloc(ps->lines, (size_t)ncap * sizeof *nl);
        if (!nl)
            return nomem(ps);
        ps->lines = nl;
        ps->cap_lines = ncap;
    }
    logline *ll = &ps->lines[ps->n_lines];
    memset(ll, 0, sizeof *ll);
    ll->file = file;
    ll->line = line_no;
    ss_status st = tokenize(ps, ll, text);
    if (st != SS_OK)
        return st;
    if (ll->n_tok > 0)
        ps->n_lines++;
    return SS_OK;
}

/* Handles `.include path` on the raw (case-kept) logical line; returns 1 when it was one. */
static int is_include(const char *t)
{
    while (isspace((unsigned char)*t))
        t++;
    return strncasecmp_ascii(t, ".include", 8) == 0 &&
           (t[8] == '\0' || isspace((unsigned char)t[8]));
}

static ss_status do_include(parser *ps, const char *file, int line_no, const char *t)
{
    logline here = {file, line_no, NULL, 0};
    while (isspace((unsigned char)*t))
        t++;
    t += 8;
    while (isspace((unsigned char)*t))
        t++;
    char name[4096];
    size_t n = 0;
    char quote = (*t == '"' || *t == '\'') ? *t++ : 0;
    while (*t && (quote ? *t != quote : !isspace((unsigned char)*t)) && n + 1 < sizeof name)
        name[n++] = *t++;
    name[n] = '\0';
    if (n == 0)
        return line_error(ps, &here, ".include needs a file name");
    char path[8192], dir[4096];
    if (name[0] == '/')
        snprintf(path, sizeof path, "%s", name);
    else
        snprintf(path, sizeof path, "%s/%s", dir_of(file, dir, sizeof dir), name);
    if (name[0] == '/' || ps->n_model_dirs == 0 || access(path, F_OK) == 0)
        return read_file(ps, path, &here, 0);
    /* not beside the including file: the model folders, in order (docs/netlist.md) */
    for (int k = 0; k < ps->n_model_dirs; k++) {
        char cand[8192];
        snprintf(cand, sizeof cand, "%s/%s", ps->model_dirs[k], name);
        if (access(cand, F_OK) == 0)
            return read_file(ps, cand, &here, 0);
    }
    ss_strbuf tried = {0};
    strbuf_printf(&tried, "%s", dir);
    for (int k = 0; k < ps->n_model_dirs; k++)
        strbuf_printf(&tried, ", %s", ps->model_dirs[k]);
    ss_status st = tried.failed ? nomem(ps)
                                : line_error(ps, &here,
                                             ".include '%s': no such file in any folder tried: "
                                             "%s (the netlist's folder, then --models, "
                                             "STAGESIM_MODELS and the installed models)",
                                             name, tried.data);
    strbuf_clear(&tried);
    return st;
}

static ss_status finish_logical(parser *ps, ss_strbuf *cur, const char *file, int line_no,
                               int is_top)
{
    if (cur->len == 0)
        return SS_OK;
    if (cur->failed)
        return nomem(ps);
    ss_status st;
    if (is_include(cur->data)) {
        st = do_include(ps, file, line_no, cur->data);
    } else {
        /* ASCII letters only, whatever locale the program runs in: a byte >= 0x80 (a piece of
         * a UTF-8 letter) is kept as it is, so names are compared byte for byte after this */
        for (size_t i = 0; i < cur->len; i++)
            if (cur->data[i] >= 'A' && cur->data[i] <= 'Z')
                cur->data[i] = (char)(cur->data[i] - 'A' + 'a');
        /* `.end` ends only the top-level netlist: a library file ending in .end must not
         * swallow the lines after its .include */
        const char *t = cur->data;
        while (isspace((unsigned char)*t))
            t++;
        int is_end = strncmp(t, ".end", 4) == 0 && (t[4] == '\0' || isspace((unsigned char)t[4]));
        st = (is_end && !is_top) ? SS_OK : push_line(ps, file, line_no, cur->data);
    }
    cur->len = 0;
    if (cur->data)
        cur->data[0] = '\0';
    return st;
}

ss_status read_text(parser *ps, const char *text, size_t len, const char *file, int is_top)
{
    ss_strbuf cur = {0};
    int cur_line = 0, line_no = 0;
    size_t pos = 0;
    ss_status st = SS_OK;
    while (pos < len && st == SS_OK) {
        size_t end = pos;
        while (end < len && text[end] != '\n')
            end++;
        line_no++;
        size_t n = end - pos;
        if (n > NETLIST_MAX_LINE_BYTES) {
            st = err_set(ps->err, SS_ERR_LIMIT, file, line_no, "line longer than %u bytes",
                         NETLIST_MAX_LINE_BYTES);
            break;
        }
        const char *l = text + pos;
        pos = end + 1;
        for (size_t i = 0; i < n; i++) {
            if (l[i] == '\0' || ((unsigned char)l[i] < 0x20 && l[i] != '\t' && l[i] != '\r')) {
                st = err_set(ps->err, SS_ERR_INPUT, file, line_no,
                             "unexpected control character (byte 0x%02x): not a text netlist",
                             (unsigned char)l[i]);
                break;
            }
        }
        if (st != SS_OK)
            break;
        if (is_top && line_no == 1) { /* the title line */
            size_t tn = n;
            while (tn > 0 && (l[tn - 1] == '\r' || isspace((unsigned char)l[tn - 1])))
                tn--;
            ps->ckt->title = arena_strndup(&ps->ckt->arena, l, tn);
            if (!ps->ckt->title)
                st = nomem(ps);
            continue;
        }
        /* strip the trailing comment and CR */
        size_t keep = 0;
        while (keep < n && l[keep] != ';' && l[keep] != '\r')
            keep++;
        size_t first = 0;
        while (first < keep && isspace((unsigned char)l[first]))
            first++;
        if (first == keep || l[first] == '*')
            continue;
        if (l[first] == '+') {
            if (cur.len == 0) {
                st = err_set(ps->err, SS_ERR_INPUT, file, line_no,
                             "continuation line '+' with nothing to continue");
                break;
            }
            /* the limit holds for the joined line, not only for each piece of it */
            if (cur.len + 1 + (keep - first - 1) > NETLIST_MAX_LINE_BYTES) {
                st = err_set(ps->err, SS_ERR_LIMIT, file, cur_line,
                             "line longer than %u bytes (joined with its '+' continuations)",
                             NETLIST_MAX_LINE_BYTES);
                break;
            }
            strbuf_append(&cur, " ", 1);
            strbuf_append(&cur, l + first + 1, keep - first - 1);
            continue;
        }
        st = finish_logical(ps, &cur, file, cur_line, is_top);
        if (st != SS_OK)
            break;
        cur_line = line_no;
        strbuf_append(&cur, l + first, keep - first);
    }
    if (st == SS_OK)
        st = finish_logical(ps, &cur, file, cur_line, is_top);
    strbuf_clear(&cur);
    return st;
}
