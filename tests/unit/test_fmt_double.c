/* Shortest round-trip double formatting (src/output/fmt_double.c).
 *
 * What is checked, and against what:
 *  - round trip: every output read back with the C library's strtod (correctly rounded on
 *    glibc) is bit-identical to the input, for random bit patterns over all finite doubles,
 *    subnormals, powers of two and hand-picked boundary values;
 *  - fewest digits and nearest digits, on a subset: with n the output's significant digits,
 *    printf's "%.*e" (correctly rounded on glibc) gives the nearest decimals with n - 1 and n
 *    digits; no decimal with n - 1 digits may read back as v (the nearest one on each side of
 *    v is tried), and the output must be the nearest n-digit decimal that reads back. The
 *    output is also never longer than the first p = 1 .. 17 whose "%.{p-1}e" reads back;
 *  - decimals with at most 15 significant digits (k * 10^e) print as exactly those digits:
 *    C11 5.2.4.2.2 (DBL_DIG = 15) guarantees such a decimal survives decimal -> double ->
 *    decimal, so no other decimal with as few digits rounds to the same double;
 *  - the layout rules of fmt_double.h, rebuilt here from the digits by a separate routine;
 *  - expected strings for named values: digits from Python 3's repr(), which prints the
 *    shortest round-trip decimal (nearest, ties to even), laid out by the rules of fmt_double.h;
 *  - the multiply-and-shift logarithms and every table entry, against exact bignum arithmetic.
 * Counts: 10 million random bit patterns (2 million in sanitizer builds); the environment
 * variable SS_FMT_TEST_COUNT overrides. */
#include <float.h>
#include <inttypes.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "output/fmt_double.h"

#if defined(__SANITIZE_ADDRESS__)
#define DEFAULT_RANDOM_COUNT 2000000L
#define DEFAULT_SUBSET_COUNT 50000L
#else
#define DEFAULT_RANDOM_COUNT 10000000L
#define DEFAULT_SUBSET_COUNT 200000L
#endif

static long random_count(void)
{
    const char *s = getenv("SS_FMT_TEST_COUNT");
    long n = s ? atol(s) : 0;
    return n > 0 ? n : DEFAULT_RANDOM_COUNT;
}

static long subset_count(void)
{
    long n = random_count() / 50;
    return n < DEFAULT_SUBSET_COUNT ? n : DEFAULT_SUBSET_COUNT;
}

/* splitmix64 (G. Steele, D. Lea, C. Flood, "Fast splittable pseudorandom number generators",
 * OOPSLA 2014); constants from memory - any decent generator serves here. */
static uint64_t rng_next(uint64_t *state)
{
    uint64_t z = (*state += 0x9E3779B97F4A7C15U);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9U;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBU;
    return z ^ (z >> 31);
}

static double from_bits(uint64_t b)
{
    double v;
    memcpy(&v, &b, sizeof v);
    return v;
}

static uint64_t to_bits(double v)
{
    uint64_t b;
    memcpy(&b, &v, sizeof b);
    return b;
}

/* A decimal M * 10^F with M free of trailing zeros (M = 0 only for zero). */
typedef struct {
    int neg;
    uint64_t m;
    int f;
    int n; /* significant digits of m */
} decimal;

static int count_digits(uint64_t m)
{
    int n = 1;
    while (m >= 10) {
        m /= 10;
        n++;
    }
    return n;
}

static void normalize(decimal *d)
{
    while (d->m != 0 && d->m % 10 == 0) {
        d->m /= 10;
        d->f++;
    }
    d->n = count_digits(d->m);
}

/* Parses [-]digits[.digits][e[+-]digits] into a decimal; returns 0 on malformed text or more
 * than 19 significant digits. */
static int parse_decimal(const char *s, decimal *d)
{
    memset(d, 0, sizeof *d);
    if (*s == '-') {
        d->neg = 1;
        s++;
    }
    int seen_digit = 0, after_point = 0, sig = 0;
    for (;; s++) {
        if (*s >= '0' && *s <= '9') {
            seen_digit = 1;
            if (d->m != 0 || *s != '0') {
                if (++sig > 19)
                    return 0;
                d->m = d->m * 10 + (uint64_t)(*s - '0');
            }
            if (after_point)
                d->f--;
        } else if (*s == '.' && !after_point) {
            after_point = 1;
        } else {
            break;
        }
    }
    if (!seen_digit)
        return 0;
    if (*s == 'e') {
        s++;
        char *end;
        long e = strtol(s, &end, 10);
        if (end == s || *end != '\0')
            return 0;
        d->f += (int)e;
    } else if (*s != '\0') {
        return 0;
    }
    normalize(d);
    return 1;
}

static int decimal_equal(const decimal *a, const decimal *b)
{
    return a->m == b->m && (a->m == 0 || a->f == b->f);
}

/* The layout of fmt_double.h for a finite decimal, built independently of fmt_double.c. */
static void ref_layout(const decimal *d, char *out, size_t len)
{
    static const char zeros[] = "0000000000000000";
    char dig[24];
    snprintf(dig, sizeof dig, "%" PRIu64, d->m);
    int n = (int)strlen(dig);
    int e = d->f + n - 1;
    const char *sign = d->neg ? "-" : "";
    if (d->m == 0)
        snprintf(out, len, "%s0", sign);
    else if (e < -5 || e > 15)
        snprintf(out, len, "%s%c%s%se%c%02d", sign, dig[0], n > 1 ? "." : "", dig + 1,
                 e < 0 ? '-' : '+', abs(e));
    else if (e >= n - 1) /* digits, then e - n + 1 zeros */
        snprintf(out, len, "%s%s%.*s", sign, dig, e - n + 1, zeros);
    else if (e >= 0)
        snprintf(out, len, "%s%.*s.%s", sign, e + 1, dig, dig + e + 1);
    else /* 0. then -e - 1 zeros, then the digits */
        snprintf(out, len, "%s0.%.*s%s", sign, -e - 1, zeros, dig);
}

static char *decimal_text(const decimal *d, char *buf, size_t len)
{
    snprintf(buf, len, "%s%" PRIu64 "e%d", d->neg ? "-" : "", d->m, d->f);
    return buf;
}

static int reads_back(const char *text, double v)
{
    return to_bits(strtod(text, NULL)) == to_bits(v);
}

static int reads_back_decimal(const decimal *d, double v)
{
    char buf[48];
    return reads_back(decimal_text(d, buf, sizeof buf), v);
}

/* The p-digit decimal nearest to v (p >= 1), from printf's correctly rounded %e. */
static decimal nearest_decimal(double v, int p)
{
    char buf[64];
    snprintf(buf, sizeof buf, "%.*e", p - 1, v);
    decimal d;
    if (!parse_decimal(buf, &d))
        fail_msg("cannot parse %s", buf);
    return d;
}

static const uint64_t P10[20] = {1U,
                                 10U,
                                 100U,
                                 1000U,
                                 10000U,
                                 100000U,
                                 1000000U,
                                 10000000U,
                                 100000000U,
                                 1000000000U,
                                 10000000000U,
                                 100000000000U,
                                 1000000000000U,
                                 10000000000000U,
                                 100000000000000U,
                                 1000000000000000U,
                                 10000000000000000U,
                                 100000000000000000U,
                                 1000000000000000000U,
                                 10000000000000000000U};

/* The p-digit decimal adjacent to d (a decimal of at most p digits) on the side of |v|
 * away from d: the other end of the bracket [lower, upper] of p-digit decimals around |v|. */
static decimal other_side(const decimal *d, double v, int p)
{
    /* d as M 10^F with exactly p digits */
    uint64_t m = d->m * P10[p - d->n];
    int f = d->f - (p - d->n);
    decimal o = {d->neg, 0, 0, 0};
    double back = fabs(strtod(decimal_text(d, (char[48]){0}, 48), NULL));
    if (back < fabs(v)) { /* d below |v|: the next decimal up */
        o.m = m + 1;
        o.f = f;
    } else if (m == P10[p - 1]) { /* d = 10^x: the next one down has a finer step */
        o.m = P10[p] - 1;
        o.f = f - 1;
    } else {
        o.m = m - 1;
        o.f = f;
    }
    normalize(&o);
    return o;
}

/* The common checks for one finite or special v. full adds the digit-optimality checks. */
static void check_value(double v, int full)
{
    char buf[64];
    memset(buf, 'x', sizeof buf);
    int len = fmt_double_shortest(buf, sizeof buf, v);
    if (len < 0 || len > FMT_DOUBLE_MAX_LEN || (size_t)len != strlen(buf))
        fail_msg("%a: bad length %d for \"%s\"", v, len, buf);
    if (isnan(v)) {
        if (len != 0)
            fail_msg("NaN printed as \"%s\"", buf);
        return;
    }
    if (!reads_back(buf, v))
        fail_msg("%a (%.17g) printed as \"%s\", which reads back as %a", v, v, buf,
                 strtod(buf, NULL));
    if (!full || isinf(v))
        return;

    decimal ours;
    if (!parse_decimal(buf, &ours))
        fail_msg("%a: cannot parse \"%s\"", v, buf);
    char ref[64];
    ref_layout(&ours, ref, sizeof ref);
    if (strcmp(ref, buf) != 0)
        fail_msg("%a printed as \"%s\", layout rules give \"%s\"", v, buf, ref);
    if (v == 0.0)
        return;

    int n = ours.n;
    /* nearest: the nearest n-digit decimal if it reads back, else the other end */
    decimal near = nearest_decimal(v, n);
    decimal want = reads_back_decimal(&near, v) ? near : other_side(&near, v, n);
    if (!decimal_equal(&ours, &want))
        fail_msg("%a printed as \"%s\"; the nearest %d-digit decimal reading back is %s", v, buf,
                 n, decimal_text(&want, (char[48]){0}, 48));
    /* fewest: no decimal with n - 1 digits reads back */
    if (n > 1) {
        decimal shorter = nearest_decimal(v, n - 1);
        decimal shorter2 = other_side(&shorter, v, n - 1);
        if (reads_back_decimal(&shorter, v) || reads_back_decimal(&shorter2, v))
            fail_msg("%a printed as \"%s\" (%d digits), but %s or %s also reads back", v, buf, n,
                     decimal_text(&shorter, (char[48]){0}, 48),
                     decimal_text(&shorter2, (char[48]){0}, 48));
    }
    /* never longer than the %.{p}g loop */
    for (int p = 1; p <= 17; p++) {
        char g[48];
        snprintf(g, sizeof g, "%.*g", p, v);
        if (reads_back(g, v)) {
            if (n > p)
                fail_msg("%a printed with %d digits, %%.%dg reads back: %s", v, n, p, g);
            break;
        }
    }
}

static void expect_text(double v, const char *want)
{
    char buf[64];
    int len = fmt_double_shortest(buf, sizeof buf, v);
    if (strcmp(buf, want) != 0 || len != (int)strlen(want))
        fail_msg("%a printed as \"%s\" (length %d), expected \"%s\"", v, buf, len, want);
    check_value(v, 1);
}

/* ---- specials and named values ---- */

static void test_specials(void **state)
{
    (void)state;
    expect_text(0.0, "0");
    expect_text(-0.0, "-0");
    expect_text(HUGE_VAL, "inf");
    expect_text(-HUGE_VAL, "-inf");
    const uint64_t nans[] = {0x7FF8000000000000U, 0xFFF8000000000000U, 0x7FF0000000000001U,
                             0x7FFFFFFFFFFFFFFFU, 0xFFFFFFFFFFFFFFFFU, 0x7FF4000000000000U};
    for (size_t i = 0; i < sizeof nans / sizeof nans[0]; i++) {
        char buf[8] = "xxxxxxx";
        assert_int_equal(fmt_double_shortest(buf, sizeof buf, from_bits(nans[i])), 0);
        assert_string_equal(buf, "");
    }
}

/* Expected texts: digits from Python 3 repr() (shortest round-trip), layout of fmt_double.h. */
static void test_named_values(void **state)
{
    (void)state;
    static const struct {
        double v;
        const char *text;
    } cases[] = {
        {0.1, "0.1"},
        {0.2, "0.2"},
        {0.3, "0.3"},
        {0.1 + 0.2, "0.30000000000000004"},
        {1.0 / 3.0, "0.3333333333333333"},
        {2.0 / 3.0, "0.6666666666666666"},
        {0.5, "0.5"},
        {1.0, "1"},
        {3.0, "3"},
        {-2.5, "-2.5"},
        {123.5, "123.5"},
        {1234567.0, "1234567"},
        {300.15, "300.15"},
        {0.00012345, "0.00012345"},
        {1e-5, "0.00001"},
        {5e-5, "0.00005"},
        {9.999e-6, "9.999e-06"},
        {1.2345e-7, "1.2345e-07"},
        {0.000012345678901234567, "0.000012345678901234568"},
        {1e15, "1000000000000000"},
        {9999999999999998.0, "9999999999999998"},
        {9007199254740992.0, "9007199254740992"},
        {1e16, "1e+16"},
        {123456789012345680.0, "1.2345678901234568e+17"},
        {18446744073709551616.0, "1.8446744073709552e+19"},
        {1e21, "1e+21"},
        {1e22, "1e+22"},
        {1e23, "1e+23"},
        {6.02214076e23, "6.02214076e+23"},
        {1.602176634e-19, "1.602176634e-19"},
        {1.380649e-23, "1.380649e-23"},
        {1e100, "1e+100"},
        {-1.5e300, "-1.5e+300"},
        {DBL_MAX, "1.7976931348623157e+308"},
        {-DBL_MAX, "-1.7976931348623157e+308"},
        {DBL_MIN, "2.2250738585072014e-308"},
        {0x0.fffffffffffffp-1022, "2.225073858507201e-308"}, /* largest subnormal */
        {0x1p-1074, "5e-324"},                                /* smallest subnormal */
        {-0x1p-1074, "-5e-324"},
        {0x1p-1073, "1e-323"},
        {1e-322, "1e-322"},
        /* exact ties between two 17-digit candidates: the even last digit */
        {0x1.0000000000001p+50, "1125899906842624.2"}, /* (2^52 + 1) / 4 */
        {0x1.0000000000003p+50, "1125899906842624.8"}, /* (2^52 + 3) / 4 */
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
        expect_text(cases[i].v, cases[i].text);
}

/* ---- boundaries: powers of two and ten, and their neighbours ---- */

static void test_powers(void **state)
{
    (void)state;
    for (int e = -1074; e <= 1023; e++) { /* every power of two, both neighbours */
        double v = ldexp(1.0, e);
        check_value(v, 1);
        check_value(-v, 1);
        check_value(nextafter(v, 0.0), 1);
        check_value(nextafter(v, HUGE_VAL), 1);
    }
    for (int e = -323; e <= 308; e++) { /* the double nearest 10^e prints as 1e<e> */
        char text[16], want[64];
        snprintf(text, sizeof text, "1e%d", e);
        double v = strtod(text, NULL);
        decimal d = {0, 1, e, 1};
        ref_layout(&d, want, sizeof want);
        expect_text(v, want);
        check_value(nextafter(v, 0.0), 1);
        check_value(nextafter(v, HUGE_VAL), 1);
    }
    /* the subnormal / normal seam and the top of the range */
    for (uint64_t b = 0; b < 4096; b++) {
        check_value(from_bits(b), 1);
        check_value(from_bits(0x0010000000000000U - 2048 + b), 1);
        check_value(from_bits(0x7FEFFFFFFFFFFFFFU - b), 1);
    }
}

/* ---- decimals with few digits come back as themselves ---- */

static void expect_decimal(int neg, uint64_t k, int e)
{
    char text[48], want[64];
    snprintf(text, sizeof text, "%s%" PRIu64 "e%d", neg ? "-" : "", k, e);
    double v = strtod(text, NULL);
    decimal d = {neg, k, e, 0};
    normalize(&d);
    ref_layout(&d, want, sizeof want);
    expect_text(v, want);
}

static void test_decimal_looking(void **state)
{
    (void)state;
    for (uint64_t k = 1; k <= 999; k++) /* k 10^e, small k: every case */
        for (int e = -30; e <= 30; e++)
            expect_decimal(0, k, e);
    uint64_t rs = 12345;
    long n = subset_count();
    for (long i = 0; i < n; i++) { /* up to 15 digits, |value| in [1e-290, 1e290] */
        uint64_t r = rng_next(&rs);
        int digits = 1 + (int)(r % 15);
        uint64_t k = P10[digits - 1] + rng_next(&rs) % (P10[digits] - P10[digits - 1]);
        if (r & 0x10000) /* often with trailing zeros */
            k = k / P10[(r >> 20) % (uint64_t)digits] * P10[(r >> 20) % (uint64_t)digits];
        int e = (int)((r >> 32) % 560) - 290 - (digits - 1);
        expect_decimal((int)((r >> 8) & 1), k, e);
    }
}

/* ---- random bit patterns ---- */

static void test_random_roundtrip(void **state)
{
    (void)state;
    uint64_t rs = 20240611;
    long n = random_count(), done = 0;
    while (done < n) {
        double v = from_bits(rng_next(&rs));
        if (!isfinite(v))
            continue;
        check_value(v, 0);
        done++;
    }
    long sub = n / 10;
    for (long i = 0; i < sub; i++) /* subnormals: exponent field 0 */
        check_value(from_bits(rng_next(&rs) & 0x800FFFFFFFFFFFFFU), 0);
    print_message("round trip: %ld random finite doubles, %ld random subnormals\n", n, sub);
}

static void test_random_shortest(void **state)
{
    (void)state;
    uint64_t rs = 77;
    long n = subset_count();
    for (long i = 0; i < n; i++) {
        uint64_t r = rng_next(&rs);
        double v;
        switch (i % 4) {
        case 0: /* any finite double */
            v = from_bits(r);
            if (!isfinite(v))
                v = from_bits(r & 0x7FEFFFFFFFFFFFFFU);
            break;
        case 1: /* subnormal */
            v = from_bits(r & 0x800FFFFFFFFFFFFFU);
            break;
        case 2: /* the range numbers in tables usually have */
            v = ldexp((double)(r >> 11), -53) * pow(10.0, (double)((int)(r % 31) - 15));
            break;
        default: /* a short decimal, then perturbed by a few units in the last place */
            v = (double)(r % 100000) * pow(10.0, (double)((int)((r >> 20) % 40) - 20));
            v = from_bits(to_bits(v) + (r >> 60) - 8);
            break;
        }
        check_value(v, 1);
    }
    print_message("shortest and nearest digits: %ld values\n", n);
}

/* ---- buffer handling ---- */

static void test_truncation(void **state)
{
    (void)state;
    assert_int_equal(fmt_double_shortest(NULL, 0, 1.25), 4);
    char buf[8] = "zzzzzzz";
    assert_int_equal(fmt_double_shortest(buf, 1, 1.25), 4);
    assert_string_equal(buf, "");
    assert_int_equal(fmt_double_shortest(buf, 3, -1.25), 5);
    assert_string_equal(buf, "-1");
    assert_int_equal(fmt_double_shortest(buf, 6, -1.25), 5);
    assert_string_equal(buf, "-1.25");
    char big[FMT_DOUBLE_MAX_LEN + 1];
    assert_int_equal(fmt_double_shortest(big, sizeof big, -DBL_MIN), FMT_DOUBLE_MAX_LEN);
    assert_string_equal(big, "-2.2250738585072014e-308");
    char small[FMT_DOUBLE_MAX_LEN];
    assert_int_equal(fmt_double_shortest(small, sizeof small, -DBL_MIN), FMT_DOUBLE_MAX_LEN);
    assert_string_equal(small, "-2.2250738585072014e-30");
}

/* ---- tables, against exact integer arithmetic ---- */

#define BN_WORDS 64
typedef struct {
    uint32_t w[BN_WORDS]; /* little-endian base 2^32 */
} bignum;

static void bn_set(bignum *a, uint64_t hi, uint64_t lo)
{
    memset(a, 0, sizeof *a);
    a->w[0] = (uint32_t)lo;
    a->w[1] = (uint32_t)(lo >> 32);
    a->w[2] = (uint32_t)hi;
    a->w[3] = (uint32_t)(hi >> 32);
}

static void bn_mul_small(bignum *a, uint32_t m)
{
    uint64_t carry = 0;
    for (int i = 0; i < BN_WORDS; i++) {
        uint64_t t = (uint64_t)a->w[i] * m + carry;
        a->w[i] = (uint32_t)t;
        carry = t >> 32;
    }
    assert_true(carry == 0);
}

static void bn_shl(bignum *a, int bits)
{
    int words = bits / 32, rest = bits % 32;
    assert_true(words < BN_WORDS - 1);
    for (int i = BN_WORDS - words - 1; i < BN_WORDS; i++) /* room to spare: no overflow */
        assert_true(a->w[i] == 0);
    for (int i = BN_WORDS - 1; i >= 0; i--) {
        uint64_t hi = i - words >= 0 ? a->w[i - words] : 0;
        uint64_t lo = i - words - 1 >= 0 && rest ? a->w[i - words - 1] >> (32 - rest) : 0;
        a->w[i] = (uint32_t)((hi << rest) | lo);
    }
}

/* a *= 2^p2 10^p10 (p2, p10 >= 0) */
static void bn_scale(bignum *a, int p2, int p10)
{
    for (int i = 0; i < p10; i++)
        bn_mul_small(a, 10);
    bn_shl(a, p2);
}

static int bn_cmp(const bignum *a, const bignum *b)
{
    for (int i = BN_WORDS - 1; i >= 0; i--)
        if (a->w[i] != b->w[i])
            return a->w[i] < b->w[i] ? -1 : 1;
    return 0;
}

/* sign of (m 2^e2 10^e10 - 1), exactly */
static int cmp_one(uint64_t m, int e2, int e10)
{
    bignum a, b;
    bn_set(&a, 0, m);
    bn_set(&b, 0, 1);
    bn_scale(&a, e2 > 0 ? e2 : 0, e10 > 0 ? e10 : 0);
    bn_scale(&b, e2 < 0 ? -e2 : 0, e10 < 0 ? -e10 : 0);
    return bn_cmp(&a, &b);
}

static void test_log_approximations(void **state)
{
    (void)state;
    for (int q = -1074; q <= 971; q++) {
        int k = fmt_double_test_flog10_pow2(q); /* 10^k <= 2^q < 10^(k+1) */
        if (!(cmp_one(1, q, -k) >= 0 && cmp_one(1, q, -k - 1) < 0))
            fail_msg("floor(log10(2^%d)) computed as %d", q, k);
        if (q >= -1073) {
            int k3 = fmt_double_test_flog10_3q_pow2(q); /* 10^k <= 3 2^(q-2) < 10^(k+1) */
            if (!(cmp_one(3, q - 2, -k3) >= 0 && cmp_one(3, q - 2, -k3 - 1) < 0))
                fail_msg("floor(log10(3/4 2^%d)) computed as %d", q, k3);
        }
        /* the scaling shift of fmt_double.c: h in [2, 5], so 4 c + 2 shifted stays < 2^61 */
        int ks[2] = {k, q >= -1073 ? fmt_double_test_flog10_3q_pow2(q) : k};
        for (int j = 0; j < 2; j++) {
            int h = q + fmt_double_test_flog2_pow10(-ks[j]) + 2;
            if (h < 2 || h > 5)
                fail_msg("q = %d: shift %d outside [2, 5]", q, h);
        }
    }
    for (int m = -292; m <= 324; m++) {
        int e = fmt_double_test_flog2_pow10(m); /* 2^e <= 10^m < 2^(e+1) */
        if (!(cmp_one(1, -e, m) >= 0 && cmp_one(1, -e - 1, m) < 0))
            fail_msg("floor(log2(10^%d)) computed as %d", m, e);
    }
}

static void test_pow10_table(void **state)
{
    (void)state;
    for (int m = -292; m <= 324; m++) {
        /* g - 1 <= G < g with G = 10^m 2^(125 - e) = A / B */
        int e = fmt_double_test_flog2_pow10(m);
        int s2 = 125 - e;
        unsigned long long hi, lo;
        fmt_double_test_pow10_entry(m, &hi, &lo);
        assert_true(hi >= (1ULL << 61) && hi <= (1ULL << 62)); /* 2^125 < g <= 2^126 */
        bignum a, gb, g1b;
        bn_set(&a, 0, 1);
        bn_scale(&a, s2 > 0 ? s2 : 0, m > 0 ? m : 0);
        bn_set(&gb, hi, lo);
        bn_set(&g1b, lo == 0 ? hi - 1 : hi, lo - 1);
        bn_scale(&gb, s2 < 0 ? -s2 : 0, m < 0 ? -m : 0);
        bn_scale(&g1b, s2 < 0 ? -s2 : 0, m < 0 ? -m : 0);
        if (!(bn_cmp(&g1b, &a) <= 0 && bn_cmp(&a, &gb) < 0))
            fail_msg("table entry for 10^%d is not floor(G) + 1", m);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_specials),
        cmocka_unit_test(test_named_values),
        cmocka_unit_test(test_truncation),
        cmocka_unit_test(test_log_approximations),
        cmocka_unit_test(test_pow10_table),
        cmocka_unit_test(test_powers),
        cmocka_unit_test(test_decimal_looking),
        cmocka_unit_test(test_random_shortest),
        cmocka_unit_test(test_random_roundtrip),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
