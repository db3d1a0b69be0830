/* Shared helpers for every module: allocation (with failure injection for tests), an arena
 * for netlist-lifetime data, a string hash map, error recording and physical constants. */
#ifndef SS_UTIL_H
#define SS_UTIL_H

#include <stdarg.h>
#include <stddef.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>

#include "stagesim/stagesim.h"

#define SS_HIDDEN __attribute__((visibility("hidden")))

/* ---- allocation: every heap allocation of the library goes through these ---------------- */
SS_HIDDEN void *ss_alloc(size_t size);             /* zeroed; NULL on failure */
SS_HIDDEN void *ss_realloc(void *p, size_t size);  /* NULL on failure, p untouched */
SS_HIDDEN void ss_free(void *p);
SS_HIDDEN char *ss_strdup(const char *s);
/* Test hooks: make the allocation with 0-based ordinal n fail (-1 disables); count calls. */
SS_HIDDEN void ss_alloc_fail_at(long n);
SS_HIDDEN long ss_alloc_count(void);

/* ---- arena: many small allocations freed at once ------------------------------------------ */
typedef struct ss_arena_block ss_arena_block;
typedef struct ss_arena {
    ss_arena_block *head;
} ss_arena;
SS_HIDDEN void *arena_alloc(ss_arena *a, size_t size); /* zeroed, 16-byte aligned */
SS_HIDDEN void *arena_alloc_raw(ss_arena *a, size_t size, size_t align); /* not zeroed */
SS_HIDDEN char *arena_strdup(ss_arena *a, const char *s);
SS_HIDDEN char *arena_strndup(ss_arena *a, const char *s, size_t n);
SS_HIDDEN void arena_clear(ss_arena *a);

/* ---- string -> int hash map (keys are borrowed; they must outlive the map) -------------- */
typedef struct ss_strmap_entry { /* 16 bytes: a table of millions of names stays compact */
    const char *key;
    uint32_t tag; /* 32-bit hash, compared before the string; also picks the bucket */
    int val;
} ss_strmap_entry;
typedef struct ss_strmap {
    ss_strmap_entry *e;
    size_t cap; /* power of two, 0 when empty */
    size_t count;
} ss_strmap;
SS_HIDDEN int strmap_get(const ss_strmap *m, const char *key, int *out_val); /* 1 found */
SS_HIDDEN int strmap_put(ss_strmap *m, const char *key, int val); /* 0 ok, -1 no memory */
SS_HIDDEN void strmap_clear(ss_strmap *m);
/* A hint: brings the bucket where key would be into the cache (a lookup follows soon). */
SS_HIDDEN void strmap_prefetch(const ss_strmap *m, const char *key);
/* Sizes the table for n keys at once (no regrowth while they are added); 0 ok, -1 no memory. */
SS_HIDDEN int strmap_reserve(ss_strmap *m, size_t n);

/* ---- errors ------------------------------------------------------------------------------ */
/* Records the first error only: a later call with err->code already set changes nothing.
 * Returns `code`, so callers can `return err_set(...)`. file may be NULL. */
SS_HIDDEN ss_status err_set(ss_error *err, ss_status code, const char *file, int line,
                            const char *fmt, ...) __attribute__((format(printf, 5, 6)));
SS_HIDDEN ss_status err_vset(ss_error *err, ss_status code, const char *file, int line,
                             const char *fmt, va_list ap);

/* Lower-case copy of a name into out[len]. Returns 1; when in does not fit, writes "" and
 * returns 0 -- never a copy cut short, which could name another node or element. */
SS_HIDDEN int name_lower_copy(const char *in, char *out, size_t len);

/* ---- growable string buffer (used by writers and the report) ------------------------------ */
typedef struct ss_strbuf {
    char *data;
    size_t len, cap;
    int failed; /* an allocation failed; contents are truncated */
} ss_strbuf;
SS_HIDDEN void strbuf_append(ss_strbuf *b, const char *s, size_t n);
SS_HIDDEN void strbuf_printf(ss_strbuf *b, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
SS_HIDDEN void strbuf_clear(ss_strbuf *b);

/* ---- reading a whole file ---------------------------------------------------------------- */
/* What strbuf_read_file found; 0 is success. */
enum {
    SS_READ_OK = 0,
    SS_READ_OPEN,        /* it could not be opened, or is a directory: *sys_errno says why */
    SS_READ_NOT_REGULAR, /* a FIFO, a device or a socket: refused before anything is read */
    SS_READ_TOO_LARGE,   /* more than max_bytes */
    SS_READ_IO,          /* a read failed: *sys_errno says why */
    SS_READ_NOMEM        /* the buffer could not be allocated (b->failed is set too) */
};
/* Appends the whole regular file at path to b (NUL-terminated), at most max_bytes of it. The
 * file is opened without blocking and checked before anything is read, so a FIFO or a device
 * (/dev/zero) is refused at once, and a file larger than max_bytes is refused by its size; the
 * first failed read or allocation ends the read. Returns an SS_READ_ code; *sys_errno gets
 * errno for SS_READ_OPEN and SS_READ_IO (0 otherwise). */
SS_HIDDEN int strbuf_read_file(ss_strbuf *b, const char *path, size_t max_bytes, int *sys_errno);
/* A short reason for an SS_READ_ code other than SS_READ_TOO_LARGE (which the caller words,
 * naming its limit): strerror for SS_READ_OPEN and SS_READ_IO. */
SS_HIDDEN const char *strbuf_read_error_text(int code, int sys_errno);

/* "4.70 k" style text of v with unit (4 significant digits, SI prefix y .. Y; "-" for NaN):
 * the report's notation (eng.c). Returns buf. */
SS_HIDDEN const char *fmt_eng(char *buf, size_t len, double v, const char *unit);

/* ---- physical constants (exact in the 2019 SI; CODATA 2018) ------------------------------- */
#define SS_BOLTZMANN_J_PER_K 1.380649e-23
#define SS_ELEMENTARY_CHARGE_C 1.602176634e-19
#define SS_ZERO_C_IN_K 273.15
#define SS_TNOM_DEFAULT_C 27.0
#define SS_PI 3.14159265358979323846
#define SS_NAN ((double)NAN) /* glibc NAN is a float constant */

static inline double thermal_voltage_v(double temp_k)
{
    return SS_BOLTZMANN_J_PER_K * temp_k / SS_ELEMENTARY_CHARGE_C;
}

#endif
