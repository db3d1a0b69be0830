/* Allocation wrappers: one place to count allocations and to make the n-th one fail in tests.
 * Leaves ownership rules to the callers (create/destroy pairs). */
#include <stdlib.h>
#include <string.h>

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

void *ss_alloc(size_t size)
{
    if (alloc_should_fail())
        return NULL;
    return calloc(1, size ? size : 1);
}

void *ss_realloc(void *p, size_t size)
{
    if (alloc_should_fail())
        return NULL;
    return realloc(p, size ? size : 1);
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
