/* Engineering notation for the text report ("4.70 k" style): a value scaled to an SI prefix
 * with 4 significant digits. The CSV files carry full precision; this is for reading. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "util/util.h"

const char *fmt_eng(char *buf, size_t len, double v, const char *unit)
{
    static const char *const prefix[] = {"f", "p", "n", "u", "m", "", "k", "M", "G", "T"};
    if (!isfinite(v)) {
        snprintf(buf, len, "%s", isnan(v) ? "-" : (v > 0 ? "inf" : "-inf"));
        return buf;
    }
    if (v == 0.0) {
        snprintf(buf, len, "0 %s", unit);
        return buf;
    }
    int e3 = (int)floor(log10(fabs(v)) / 3.0);
    if (e3 < -5)
        e3 = -5;
    if (e3 > 4)
        e3 = 4;
    double scaled = v / pow(10.0, 3.0 * e3);
    /* rounding may carry to 1000: move up one prefix */
    char tmp[32];
    snprintf(tmp, sizeof tmp, "%.4g", scaled);
    if (fabs(strtod(tmp, NULL)) >= 1000.0 && e3 < 4) {
        e3++;
        scaled = v / pow(10.0, 3.0 * e3);
    }
    snprintf(buf, len, "%.4g %s%s", scaled, prefix[e3 + 5], unit);
    return buf;
}
