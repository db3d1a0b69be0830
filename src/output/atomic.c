/* Atomic file output for every writer (CSV, JUnit, SVG): the bytes go to a fresh temporary
 * file beside the target, are flushed to disk, and the file is renamed over the target, so a
 * reader never sees half a file and an interrupted run leaves the old file or none. */
#define _POSIX_C_SOURCE 200809L /* O_CLOEXEC, fsync */
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "output/output.h"

static int write_all(int fd, const char *data, size_t len)
{
    while (len > 0) {
        ssize_t n = write(fd, data, len);
        if (n < 0) {
            if (errno == EINTR)
                continue;
            return -1;
        }
        data += n;
        len -= (size_t)n;
    }
    return 0;
}

/* The temporary file is created with mode 0666 so the umask decides the final permissions,
 * as for any other file the tool writes. */
ss_status output_atomic_open(output_file *f, const char *path, ss_error *err)
{
    static unsigned long counter; /* a repeated name only costs a retry: O_EXCL refuses it */
    memset(f, 0, sizeof *f);
    f->fd = -1;
    f->path = path;
    size_t tmp_len = strlen(path) + 64;
    f->tmp = ss_alloc(tmp_len);
    if (!f->tmp)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int attempt = 0; attempt < 100 && f->fd < 0; attempt++) {
        snprintf(f->tmp, tmp_len, "%s.tmp.%ld.%lu", path, (long)getpid(), counter++);
        f->fd = open(f->tmp, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
        if (f->fd < 0 && errno != EEXIST)
            break;
    }
    if (f->fd < 0) {
        int e = errno;
        ss_free(f->tmp);
        f->tmp = NULL;
        return err_set(err, SS_ERR_IO, path, 0, "cannot write: %s", strerror(e));
    }
    return SS_OK;
}

void output_atomic_write(output_file *f, const char *data, size_t len)
{
    if (!f->failed && write_all(f->fd, data, len) != 0) {
        f->failed = 1;
        f->err_no = errno;
    }
}

ss_status output_atomic_commit(output_file *f, ss_error *err)
{
    int failed = f->failed, e = f->err_no;
    if (!failed && fsync(f->fd) != 0) { /* on disk before renamed */
        failed = 1;
        e = errno;
    }
    if (close(f->fd) != 0 && !failed) {
        failed = 1;
        e = errno;
    }
    if (!failed && rename(f->tmp, f->path) != 0) {
        failed = 1;
        e = errno;
    }
    if (failed)
        unlink(f->tmp);
    ss_free(f->tmp);
    f->tmp = NULL;
    f->fd = -1;
    return failed ? err_set(err, SS_ERR_IO, f->path, 0, "cannot write: %s", strerror(e)) : SS_OK;
}

void output_atomic_abort(output_file *f)
{
    if (f->fd >= 0) {
        close(f->fd);
        unlink(f->tmp);
    }
    ss_free(f->tmp);
    f->tmp = NULL;
    f->fd = -1;
}

ss_status output_write_atomic(const char *path, const char *data, size_t len, ss_error *err)
{
    output_file f;
    ss_status st = output_atomic_open(&f, path, err);
    if (st != SS_OK)
        return st;
    output_atomic_write(&f, data, len);
    return output_atomic_commit(&f, err);
}

ss_status output_write_strbuf(ss_strbuf *b, const char *path, ss_error *err)
{
    ss_status st = b->failed ? err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory")
                             : output_write_atomic(path, b->data ? b->data : "", b->len, err);
    strbuf_clear(b);
    return st;
}
