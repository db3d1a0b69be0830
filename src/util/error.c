/* Error recording (first error wins, so the netlist line where it was detected survives the
 * way up), error formatting, and the growable string buffer. */
#define _POSIX_C_SOURCE 200809L /* fileno */
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

#include "util/util.h"

ss_status err_vset(ss_error *err, ss_status code, const char *file, int line, const char *fmt,
                   va_list ap)
{
    if (!err || err->code != SS_OK)
        return code;
    err->code = code;
    err->line = line;
    snprintf(err->file, sizeof err->file, "%s", file ? file : "");
    vsnprintf(err->message, sizeof err->message, fmt, ap);
    return code;
}

ss_status err_set(ss_error *err, ss_status code, const char *file, int line, const char *fmt,
                  ...)
{
    va_list ap;
    va_start(ap, fmt);
    err_vset(err, code, file, line, fmt, ap);
    va_end(ap);
    return code;
}

void ss_error_format(const ss_error *err, char *buf, size_t buf_len)
{
    if (!buf || buf_len == 0)
        return;
    if (err->file[0] && err->line > 0)
        snprintf(buf, buf_len, "%s:%d: %s", err->file, err->line, err->message);
    else if (err->file[0])
        snprintf(buf, buf_len, "%s: %s", err->file, err->message);
    else
        snprintf(buf, buf_len, "stagesim: %s", err->message);
}

const char *ss_status_name(ss_status code)
{
    switch (code) {
    case SS_OK: return "ok";
    case SS_ERR_INPUT: return "bad input";
    case SS_ERR_IO: return "i/o error";
    case SS_ERR_NOMEM: return "out of memory";
    case SS_ERR_SINGULAR: return "singular circuit matrix";
    case SS_ERR_NO_CONVERGENCE: return "no convergence";
    case SS_ERR_LIMIT: return "resource limit exceeded";
    case SS_ERR_INTERNAL: return "internal error";
    }
    return "unknown status";
}

const char *ss_version(void) { return SS_VERSION; }

void strbuf_append(ss_strbuf *b, const char *s, size_t n)
{
    if (b->failed)
        return;
    if (b->len + n + 1 > b->cap) {
        size_t ncap = b->cap ? b->cap : 256;
        while (ncap < b->len + n + 1)
            ncap *= 2;
        char *nd = ss_realloc(b->data, ncap);
        if (!nd) {
            b->failed = 1;
            return;
        }
        b->data = nd;
        b->cap = ncap;
    }
    memcpy(b->data + b->len, s, n);
    b->len += n;
    b->data[b->len] = '\0';
}

void strbuf_printf(ss_strbuf *b, const char *fmt, ...)
{
    char small[512];
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(small, sizeof small, fmt, ap);
    va_end(ap);
    if (n < 0)
        return;
    if ((size_t)n < sizeof small) {
        strbuf_append(b, small, (size_t)n);
        return;
    }
    char *big = ss_alloc((size_t)n + 1);
    if (!big) {
        b->failed = 1;
        return;
    }
    va_start(ap, fmt);
    vsnprintf(big, (size_t)n + 1, fmt, ap);
    va_end(ap);
    strbuf_append(b, big, (size_t)n);
    ss_free(big);
}

void strbuf_clear(ss_strbuf *b)
{
    ss_free(b->data);
    memset(b, 0, sizeof *b);
}

int strbuf_read_file(ss_strbuf *b, FILE *f)
{
    /* a regular file's size is known: one allocation of the right size, not a doubling
     * buffer copied at every step (a netlist of a million elements is tens of MiB) */
    struct stat st;
    if (fstat(fileno(f), &st) == 0 && S_ISREG(st.st_mode) && st.st_size > 0 &&
        (uintmax_t)st.st_size < SIZE_MAX / 2 && b->cap < b->len + (size_t)st.st_size + 1) {
        size_t want = b->len + (size_t)st.st_size + 1;
        char *nd = ss_realloc(b->data, want);
        if (!nd) {
            b->failed = 1;
            fclose(f);
            return 0;
        }
        b->data = nd;
        b->cap = want;
        size_t got = fread(b->data + b->len, 1, b->cap - b->len - 1, f);
        b->len += got;
        b->data[b->len] = '\0';
    }
    char chunk[65536]; /* a pipe, or what a growing file added since */
    size_t got;
    while ((got = fread(chunk, 1, sizeof chunk, f)) > 0)
        strbuf_append(b, chunk, got);
    int bad = ferror(f);
    fclose(f);
    return bad ? -1 : 0;
}

int name_lower_copy(const char *in, char *out, size_t len)
{
    size_t i;
    for (i = 0; in[i] && i + 1 < len; i++)
        out[i] = (char)((in[i] >= 'A' && in[i] <= 'Z') ? in[i] + 32 : in[i]);
    int fits = in[i] == '\0';
    out[fits ? i : 0] = '\0';
    return fits;
}
