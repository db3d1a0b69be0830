/* Error recording (first error wins, so the netlist line where it was detected survives the
 * way up), error formatting, and the growable string buffer. */
#define _POSIX_C_SOURCE 200809L /* O_CLOEXEC */
#include <errno.h>
#include <fcntl.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

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

/* Grows b so that `more` bytes and a NUL fit after its contents; 0 ok, -1 failed (b->failed). */
static int strbuf_reserve(ss_strbuf *b, size_t more)
{
    if (b->len + more + 1 <= b->cap)
        return 0;
    char *nd = ss_realloc(b->data, b->len + more + 1);
    if (!nd) {
        b->failed = 1;
        return -1;
    }
    b->data = nd;
    b->cap = b->len + more + 1;
    return 0;
}

int strbuf_read_file(ss_strbuf *b, const char *path, size_t max_bytes, int *sys_errno)
{
    *sys_errno = 0;
    if (b->failed)
        return SS_READ_NOMEM;
    /* O_NONBLOCK: opening a FIFO with no writer must not wait for one; fstat then tells what
     * the path is before a byte is read */
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
    if (fd < 0) {
        *sys_errno = errno;
        return SS_READ_OPEN;
    }
    struct stat st;
    if (fstat(fd, &st) != 0) {
        *sys_errno = errno;
        close(fd);
        return SS_READ_IO;
    }
    if (S_ISDIR(st.st_mode)) {
        close(fd);
        *sys_errno = EISDIR;
        return SS_READ_OPEN;
    }
    if (!S_ISREG(st.st_mode)) {
        close(fd);
        return SS_READ_NOT_REGULAR;
    }
    if (st.st_size < 0 || (uintmax_t)st.st_size > (uintmax_t)max_bytes) {
        close(fd);
        return SS_READ_TOO_LARGE;
    }
    /* the size is known: one allocation of the right size (a netlist of a million elements is
     * tens of MiB); the end of the file is then found with a small probe, and only a file that
     * grew while it was read makes the buffer grow */
    size_t start = b->len;
    int rc = strbuf_reserve(b, (size_t)st.st_size) == 0 ? SS_READ_OK : SS_READ_NOMEM;
    char probe[4096];
    while (rc == SS_READ_OK) {
        size_t room = b->cap - b->len - 1;
        char *dst = room ? b->data + b->len : probe;
        ssize_t got = read(fd, dst, room ? room : sizeof probe);
        if (got < 0 && errno == EINTR)
            continue;
        if (got < 0) {
            *sys_errno = errno;
            rc = SS_READ_IO;
        } else if (got == 0) {
            break;
        } else if (b->len - start + (size_t)got > max_bytes) {
            rc = SS_READ_TOO_LARGE;
        } else if (dst == probe) {
            size_t read_so_far = b->len - start, cap_left = max_bytes - read_so_far;
            size_t grow = read_so_far > (size_t)got ? read_so_far : (size_t)got;
            if (strbuf_reserve(b, grow < cap_left ? grow : cap_left) != 0) {
                rc = SS_READ_NOMEM;
            } else {
                memcpy(b->data + b->len, probe, (size_t)got);
                b->len += (size_t)got;
            }
        } else {
            b->len += (size_t)got;
        }
    }
    if (b->data)
        b->data[b->len] = '\0';
    close(fd);
    return rc;
}

const char *strbuf_read_error_text(int code, int sys_errno)
{
    switch (code) {
    case SS_READ_OK: return "no error";
    case SS_READ_OPEN:
    case SS_READ_IO: return strerror(sys_errno);
    case SS_READ_NOT_REGULAR: return "not a regular file (a FIFO, a device or a socket)";
    case SS_READ_TOO_LARGE: return "too large";
    case SS_READ_NOMEM: return "out of memory";
    }
    return "unknown error";
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
