/* Allocation wrappers: one place to count allocations and to make the n-th one fail in tests.
 * Leaves ownership rules to the callers (create/destroy pairs). */
#define _DEFAULT_SOURCE /* madvise */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include "util/util.h"

static long g_alloc_count;
static long g_fail_at = -1;

void ss_alloc_fail_at(long n)
{
    g_fail_at = n;
    g_alloc_count = 0;
}

long ss_alloc_count(void) { return g_alloc_count; }

/* Counts the call and says whether this one is the injected failure. */
static int alloc_should_fail(void)
{
    long ordinal = g_alloc_count++;
    return g_fail_at >= 0 && ordinal == g_fail_at;
}

/* Large blocks (the matrices, hash tables, element records and arena blocks of a circuit of
 * 10^5 nodes and up) ask the kernel for transparent huge pages: first touches then fault in
 * 2 MiB at a time instead of 4 KiB, and random probes into a table of many MiB miss the TLB far
 * less. Only the 2 MiB-aligned interior of the block is advised; the kernel may ignore it. */
#define HUGE_ADVISE_MIN ((size_t)4 << 20)
#define HUGE_PAGE ((uintptr_t)2 << 20)

static void advise_huge(void *p, size_t size)
{
#ifdef MADV_HUGEPAGE
    if (!p || size < HUGE_ADVISE_MIN)
        return;
    uintptr_t lo = ((uintptr_t)p + HUGE_PAGE - 1) & ~(HUGE_PAGE - 1);
    uintptr_t hi = ((uintptr_t)p + size) & ~(HUGE_PAGE - 1);
    if (hi > lo)
        (void)madvise((void *)lo, hi - lo, MADV_HUGEPAGE);
#else
    (void)p;
    (void)size;
#endif
}

void *ss_alloc(size_t size)
{
    if (alloc_should_fail())
        return NULL;
    void *p = calloc(1, size ? size : 1);
    advise_huge(p, size);
    return p;
}

void *ss_realloc(void *p, size_t size)
{
    if (alloc_should_fail())
        return NULL;
    void *q = realloc(p, size ? size : 1);
    advise_huge(q, size);
    return q;
}

void ss_free(void *p) { free(p); }

char *ss_strdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = ss_alloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}
