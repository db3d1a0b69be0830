/* What the benchmark programs share: a monotonic clock, reading a netlist file, and the
 * generated RC ladder most of them measure. Header-only: each bench_*.c is its own program. */
#ifndef SS_BENCH_UTIL_H
#define SS_BENCH_UTIL_H

#include <stdio.h>
#include <stdlib.h>
#include <time.h>

static inline double bench_now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* The whole file, NUL-terminated (malloc'd); NULL when it cannot be opened. */
static inline char *bench_read_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *t = malloc((size_t)n + 1);
    size_t got = fread(t, 1, (size_t)n, f);
    t[got] = '\0';
    fclose(f);
    return t;
}

/* An RC ladder netlist (malloc'd, length in *len when len is not NULL): the title line, then
 * `source` (the line driving n0, without its newline), `sections` sections of r_text ohms and
 * 1 nF to ground (nodes n0 .. n<sections>), then `tail` (analysis lines, each ending in a
 * newline). */
static inline char *bench_rc_ladder(const char *title, const char *source, long sections,
                                    const char *r_text, const char *tail, size_t *len)
{
    size_t cap = (size_t)sections * 64 + 1024, n = 0;
    char *t = malloc(cap);
    if (!t)
        return NULL;
    n += (size_t)snprintf(t + n, cap - n, "%s\n%s\n", title, source);
    for (long i = 0; i < sections; i++)
        n += (size_t)snprintf(t + n, cap - n, "r%ld n%ld n%ld %s\nc%ld n%ld 0 1n\n", i, i, i + 1,
                              r_text, i, i + 1);
    n += (size_t)snprintf(t + n, cap - n, "%s", tail);
    if (len)
        *len = n;
    return t;
}

#endif
