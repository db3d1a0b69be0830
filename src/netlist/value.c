/* Numbers as netlists write them: a decimal number, an optional SI suffix and optional unit
 * letters (`4.7kOhm`, `100nF`, `1meg`). Expressions in braces are left to expr.c. */
#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "netlist/netlist.h"

/* The SI suffixes (lower case) with their scale and power of ten (`mil` is no power of ten:
 * 0). `meg` and `mil` are tried before `m` (common practice of netlist languages). */
static const struct {
    const char *text;
    double scale;
    int exp10;
} SUFFIXES[] = {
    {"meg", 1e6, 6}, {"mil", 25.4e-6, 0}, {"t", 1e12, 12}, {"g", 1e9, 9},     {"k", 1e3, 3},
    {"m", 1e-3, -3}, {"u", 1e-6, -6},     {"n", 1e-9, -9}, {"p", 1e-12, -12}, {"f", 1e-15, -15},
};

/* Index into SUFFIXES of the suffix at s, -1 for none; sets *len to its length (0 for none). */
static int suffix_at(const char *s, size_t *len)
{
    for (size_t i = 0; i < sizeof SUFFIXES / sizeof SUFFIXES[0]; i++) {
        size_t n = strlen(SUFFIXES[i].text);
        if (strncasecmp_ascii(s, SUFFIXES[i].text, n) == 0) {
            *len = n;
            return (int)i;
        }
    }
    *len = 0;
    return -1;
}

/* Scale of an SI suffix at s; sets *len to the suffix length, 0 for none. */
static double suffix_scale(const char *s, size_t *len)
{
    int k = suffix_at(s, len);
    return k >= 0 ? SUFFIXES[k].scale : 1.0;
}

int value_si_exp(const char *tok)
{
    size_t n = value_number_len(tok), len;
    int k = n > 0 ? suffix_at(tok + n, &len) : -1;
    return k >= 0 ? SUFFIXES[k].exp10 : 0;
}

int strncasecmp_ascii(const char *a, const char *b, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        int ca = tolower((unsigned char)a[i]), cb = tolower((unsigned char)b[i]);
        if (ca != cb)
            return ca - cb;
        if (ca == 0)
            return 0;
    }
    return 0;
}

/* Length of the decimal number at s ([+-]digits[.digits][e[+-]digits]); 0 if none. */
size_t value_number_len(const char *s)
{
    size_t i = 0, digits = 0;
    if (s[i] == '+' || s[i] == '-')
        i++;
    while (isdigit((unsigned char)s[i])) {
        i++;
        digits++;
    }
    if (s[i] == '.') {
        i++;
        while (isdigit((unsigned char)s[i])) {
            i++;
            digits++;
        }
    }
    if (digits == 0)
        return 0;
    if (s[i] == 'e' || s[i] == 'E') {
        size_t j = i + 1;
        if (s[j] == '+' || s[j] == '-')
            j++;
        if (isdigit((unsigned char)s[j])) {
            while (isdigit((unsigned char)s[j]))
                j++;
            i = j;
        }
    }
    return i;
}

size_t value_scan(const char *s, double *out)
{
    size_t n = value_number_len(s);
    if (n == 0)
        return 0;
    char small[64];
    char *buf = n < sizeof small ? small : ss_alloc(n + 1);
    if (!buf)
        return 0;
    memcpy(buf, s, n);
    buf[n] = '\0';
    double v = strtod(buf, NULL);
    if (buf != small)
        ss_free(buf);
    size_t slen;
    double scale = suffix_scale(s + n, &slen);
    size_t i = n + slen;
    while (isalpha((unsigned char)s[i])) /* unit letters: ignored */
        i++;
    *out = v * scale;
    return i;
}

int value_parse(const char *text, double *out)
{
    double v;
    size_t n = value_scan(text, &v);
    if (n == 0 || text[n] != '\0' || !isfinite(v))
        return -1;
    *out = v;
    return 0;
}

int strcasecmp_ascii_eq(const char *a, const char *b)
{
    for (; *a && *b; a++, b++)
        if (tolower((unsigned char)*a) != tolower((unsigned char)*b))
            return 0;
    return *a == *b;
}

ss_status ss_value_parse(const char *text, double *out_value, ss_error *err)
{
    if (!text)
        text = "";
    size_t n = value_number_len(text), slen = 0;
    if (n > 0)
        suffix_scale(text + n, &slen);
    if (n == 0 || text[n + slen] != '\0')
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "'%s' is not a number (decimal digits and an optional SI suffix: t g meg "
                       "k m u n p f)",
                       text);
    /* "1M" reads milli, as everywhere in the netlist; on a command line it is too likely
     * meant as mega to take silently */
    if (slen == 1 && text[n] == 'M')
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "'%s': M is milli here as in the netlist; write %.*sm for milli or "
                       "%.*smeg for mega",
                       text, (int)n, text, (int)n, text);
    double v;
    if (value_scan(text, &v) == 0) /* a number of 64 digits or more needs a copy */
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (!isfinite(v))
        return err_set(err, SS_ERR_INPUT, NULL, 0, "'%s' is out of range", text);
    *out_value = v;
    return SS_OK;
}
