/* Engineering notation for what stagesim prints ("4.7 k" style): a value scaled to an SI
 * prefix with 4 significant digits, and the unit of a figure read from its name. The CSV files
 * carry full precision; this is for reading. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "stagesim/core.h"
#include "util/util.h"

/* the prefixes from yocto to yotta, prefix[k] for 10^(3 (k - 8)) */
static const char *const PREFIX[] = {"y", "z", "a", "f", "p", "n", "u", "m", "",
                                     "k", "M", "G", "T", "P", "E", "Z", "Y"};
#define PREFIX_ZERO 8
#define PREFIX_MAX 8

const char *fmt_eng(char *buf, size_t len, double v, const char *unit)
{
    if (!isfinite(v)) {
        snprintf(buf, len, "%s", isnan(v) ? "-" : (v > 0 ? "inf" : "-inf"));
        return buf;
    }
    if (v == 0.0) {
        snprintf(buf, len, unit[0] ? "0 %s" : "0", unit);
        return buf;
    }
    int e3 = (int)floor(log10(fabs(v)) / 3.0);
    if (e3 < -PREFIX_MAX || e3 > PREFIX_MAX) { /* beyond every prefix: a power of ten */
        snprintf(buf, len, unit[0] ? "%.4g %s" : "%.4g", v, unit);
        return buf;
    }
    double scaled = v / pow(10.0, 3.0 * e3);
    /* rounding may carry to 1000: move up one prefix */
    char tmp[32];
    snprintf(tmp, sizeof tmp, "%.4g", scaled);
    if (fabs(strtod(tmp, NULL)) >= 1000.0 && e3 < PREFIX_MAX) {
        e3++;
        scaled = v / pow(10.0, 3.0 * e3);
    }
    const char *p = PREFIX[e3 + PREFIX_ZERO];
    if (!p[0] && !unit[0])
        snprintf(buf, len, "%.4g", scaled);
    else
        snprintf(buf, len, "%.4g %s%s", scaled, p, unit);
    return buf;
}

const char *ss_format_eng(char *buf, size_t len, double v, const char *unit)
{
    if (!buf || len == 0)
        return buf;
    return fmt_eng(buf, len, v, unit ? unit : "");
}

static int ends_with(const char *s, size_t n, const char *suffix)
{
    size_t k = strlen(suffix);
    return n >= k && strncmp(s + n - k, suffix, k) == 0;
}

const char *ss_figure_unit(const char *name)
{
    if (!name)
        return "";
    if (strncmp(name, "abs(", 4) == 0)
        name += 4;
    /* the name without "@FREQ" or "(ELEMENT)" */
    size_t n = strcspn(name, "@(");
    if (name[n] == '(') { /* an op.csv row: by its quantity */
        static const struct {
            const char *q, *unit;
        } OP[] = {{"v", "V"},   {"vbe", "V"}, {"vce", "V"},    {"vbc", "V"},   {"vgs", "V"},
                  {"vds", "V"}, {"vbs", "V"}, {"vth", "V"},    {"i", "A"},     {"ic", "A"},
                  {"ib", "A"},  {"ie", "A"},  {"id", "A"},     {"ig", "A"},    {"gm", "S"},
                  {"gds", "S"}, {"gmb", "S"}, {"power", "W"}};
        for (size_t k = 0; k < sizeof OP / sizeof OP[0]; k++)
            if (strlen(OP[k].q) == n && strncmp(name, OP[k].q, n) == 0)
                return OP[k].unit;
        return "";
    }
    static const struct {
        const char *suffix, *unit;
    } SUFFIX[] = {{"_hz", "Hz"}, {"_ohm", "ohm"}, {"_db", "dB"}, {"_deg", "deg"},
                  {"_pct", "%"}, {"_v", "V"},     {"_a", "A"},   {"_w", "W"}};
    for (size_t k = 0; k < sizeof SUFFIX / sizeof SUFFIX[0]; k++)
        if (ends_with(name, n, SUFFIX[k].suffix))
            return SUFFIX[k].unit;
    return "";
}

const char *ss_format_figure(char *buf, size_t len, double v, const char *name)
{
    if (!buf || len == 0)
        return buf;
    const char *unit = ss_figure_unit(name);
    /* logarithmic and angular units and percentages take no SI prefix */
    if (isfinite(v) && (strcmp(unit, "dB") == 0 || strcmp(unit, "deg") == 0 ||
                        strcmp(unit, "%") == 0)) {
        /* four significant digits, never an exponent: a shift of 7.7e-05 dB reads
         * -0.00007687 dB */
        double m = fabs(v);
        if (m == 0.0 || (m >= 1e-3 && m < 1e4))
            snprintf(buf, len, "%.4g %s", v, unit);
        else if (m < 1e-3) {
            int dec = 3 - (int)floor(log10(m));
            snprintf(buf, len, "%.*f %s", dec > 15 ? 15 : dec, v, unit);
        } else
            snprintf(buf, len, "%.0f %s", v, unit);
        return buf;
    }
    return fmt_eng(buf, len, v, unit);
}
