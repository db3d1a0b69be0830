/* Atomic file output for every writer (CSV, JUnit, SVG): the bytes go to a fresh temporary
 * file beside the target, are flushed to disk, and the file is renamed over the target, so a
 * reader never sees half a file and an interrupted run leaves the old file or none. Every
 * temporary name lives in a registry while it exists, so a signal handler can remove them all
 * (ss_output_remove_temporaries); the bytes are hashed as they are written (SHA-256), for the
 * manifest of an output set (outset.c). */
#define _POSIX_C_SOURCE 200809L /* O_CLOEXEC, fsync */
#include <errno.h>
#include <fcntl.h>
#include <stdatomic.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "output/output.h"

/* ---- the registry of temporary names ------------------------------------------------------
 * Slots hold pointers to names owned by whoever registered them (who releases the slot before
 * freeing the name). A signal handler reads them with plain atomic loads: no lock, no
 * allocation. Beside each slot, the digest of the last file committed to that name (a staged
 * file of an output set is such a name). */
static _Atomic(const char *) temp_name[OUTPUT_MAX_TEMPORARIES];
static unsigned char temp_digest[OUTPUT_MAX_TEMPORARIES][32];
static unsigned long long temp_size[OUTPUT_MAX_TEMPORARIES];
static int temp_hashed[OUTPUT_MAX_TEMPORARIES];

int output_temp_register(const char *name)
{
    for (int i = 0; i < OUTPUT_MAX_TEMPORARIES; i++) {
        const char *expect = NULL;
        if (atomic_compare_exchange_strong(&temp_name[i], &expect, name)) {
            temp_hashed[i] = 0;
            return i;
        }
    }
    return -1;
}

void output_temp_release(int slot)
{
    if (slot >= 0 && slot < OUTPUT_MAX_TEMPORARIES)
        atomic_store(&temp_name[slot], NULL);
}

int output_temp_digest(int slot, unsigned char digest[32], unsigned long long *size)
{
    if (slot < 0 || slot >= OUTPUT_MAX_TEMPORARIES || !temp_hashed[slot])
        return 0;
    memcpy(digest, temp_digest[slot], 32);
    *size = temp_size[slot];
    return 1;
}

/* Records the digest of a file just committed to path, when path is a registered name. */
static void note_digest(const char *path, const unsigned char digest[32], unsigned long long size)
{
    for (int i = 0; i < OUTPUT_MAX_TEMPORARIES; i++) {
        const char *p = atomic_load(&temp_name[i]);
        if (p && strcmp(p, path) == 0) {
            memcpy(temp_digest[i], digest, 32);
            temp_size[i] = size;
            temp_hashed[i] = 1;
        }
    }
}

void ss_output_remove_temporaries(void)
{
    for (int i = 0; i < OUTPUT_MAX_TEMPORARIES; i++) {
        const char *p = atomic_load(&temp_name[i]);
        if (p)
            unlink(p); /* async-signal-safe (POSIX.1-2008, sec. 2.4.3) */
    }
}

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
    /* registered before the file exists, so no moment passes where a signal would leave it */
    f->slot = output_temp_register(f->tmp);
    if (f->slot < 0) {
        ss_free(f->tmp);
        f->tmp = NULL;
        return err_set(err, SS_ERR_LIMIT, path, 0, "more than %d files open for writing at once",
                       OUTPUT_MAX_TEMPORARIES);
    }
    sha256_init(&f->hash);
    for (int attempt = 0; attempt < 100 && f->fd < 0; attempt++) {
        snprintf(f->tmp, tmp_len, "%s.tmp.%ld.%lu", path, (long)getpid(), counter++);
        f->fd = open(f->tmp, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
        if (f->fd < 0 && errno != EEXIST)
            break;
    }
    if (f->fd < 0) {
        int e = errno;
        output_temp_release(f->slot);
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
    if (!f->failed) {
        sha256_update(&f->hash, data, len);
        f->size += len;
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
    if (failed) {
        unlink(f->tmp);
    } else {
        unsigned char digest[32];
        sha256_final(&f->hash, digest);
        note_digest(f->path, digest, f->size);
    }
    output_temp_release(f->slot);
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
    if (f->tmp)
        output_temp_release(f->slot);
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
