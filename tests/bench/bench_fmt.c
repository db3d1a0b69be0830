/* Number-formatting benchmark: nanoseconds per double for fmt_double_shortest against
 * snprintf("%.17g") and the earlier "%.15g, then %.17g when strtod disagrees" scheme, on a few
 * kinds of values. Every shortest output is also checked to read back exactly.
 * Usage: bench_fmt [COUNT]   (values per kind, default 2000000). */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "output/fmt_double.h"

#include "bench_util.h"

/* splitmix64 (Steele, Lea, Flood, OOPSLA 2014; constants from memory) */
static uint64_t rng_next(uint64_t *state)
{
    uint64_t z = (*state += 0x9E3779B97F4A7C15U);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9U;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBU;
    return z ^ (z >> 31);
}

static int fmt_shortest(char *buf, size_t len, double v)
{
    return fmt_double_shortest(buf, len, v);
}

static int fmt_printf17(char *buf, size_t len, double v)
{
    return snprintf(buf, len, "%.17g", v);
}

static int fmt_printf15_check(char *buf, size_t len, double v)
{
    if (isnan(v)) {
        buf[0] = '\0';
        return 0;
    }
    int n = snprintf(buf, len, "%.15g", v);
    if (strtod(buf, NULL) != v)
        n = snprintf(buf, len, "%.17g", v);
    return n;
}

typedef int (*fmt_fn)(char *, size_t, double);

/* Best of three passes over the values; returns ns per value, *chars the output size. */
static double time_fn(fmt_fn f, const double *v, long n, long *chars)
{
    char buf[48];
    double best = 1e30;
    for (int rep = 0; rep < 3; rep++) {
        long total = 0;
        double t0 = bench_now_s();
        for (long i = 0; i < n; i++)
            total += f(buf, sizeof buf, v[i]);
        double t = bench_now_s() - t0;
        if (t < best)
            best = t;
        *chars = total;
    }
    return best / (double)n * 1e9;
}

int main(int argc, char **argv)
{
    long n = argc > 1 ? atol(argv[1]) : 2000000;
    if (n <= 0) {
        fprintf(stderr, "usage: bench_fmt [COUNT]\n");
        return 2;
    }
    double *v = malloc((size_t)n * sizeof *v);
    if (!v)
        return 1;
    static const char *const kinds[] = {
        "random bit patterns (finite)",
        "uniform in [0, 1)",
        "sweep-like: 1e3 * 10^(i/997) * (1 + 1e-6 i)",
        "short decimals: k * 10^e, k < 10^4",
    };
    printf("%-46s %12s %12s %14s\n", "values", "shortest", "%.17g", "%.15g+strtod");
    for (int kind = 0; kind < 4; kind++) {
        uint64_t rs = 42 + (uint64_t)kind;
        for (long i = 0; i < n; i++) {
            uint64_t r = rng_next(&rs);
            double x;
            switch (kind) {
            case 0:
                do {
                    memcpy(&x, &r, sizeof x);
                    r = rng_next(&rs);
                } while (!isfinite(x));
                break;
            case 1:
                x = (double)(r >> 11) * 0x1p-53;
                break;
            case 2:
                x = 1e3 * pow(10.0, (double)(i % 4000) / 997.0) * (1.0 + 1e-6 * (double)i);
                break;
            default:
                x = (double)(r % 10000) * pow(10.0, (double)((int)((r >> 32) % 24) - 12));
                break;
            }
            v[i] = x;
        }
        /* correctness guard: every output reads back exactly */
        for (long i = 0; i < n; i++) {
            char buf[48];
            fmt_double_shortest(buf, sizeof buf, v[i]);
            if (strtod(buf, NULL) != v[i]) {
                fprintf(stderr, "%a printed as %s: does not read back\n", v[i], buf);
                return 1;
            }
        }
        long c_short, c_17, c_15;
        double t_short = time_fn(fmt_shortest, v, n, &c_short);
        double t_17 = time_fn(fmt_printf17, v, n, &c_17);
        double t_15 = time_fn(fmt_printf15_check, v, n, &c_15);
        printf("%-46s %9.1f ns %9.1f ns %11.1f ns\n", kinds[kind], t_short, t_17, t_15);
        printf("%-46s %9.2f ch %9.2f ch %11.2f ch\n", "  mean characters", (double)c_short / (double)n,
               (double)c_17 / (double)n, (double)c_15 / (double)n);
    }
    free(v);
    return 0;
}
