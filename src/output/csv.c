/* CSV writer for result tables: RFC 4180 quoting, LF line ends, round-trip numbers, written
 * atomically. What the tables hold is the analyses' business. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "output/fmt_double.h"
#include "output/output.h"
#include "util/table.h"

int output_format_double(char *buf, size_t len, double v)
{
    return fmt_double_shortest(buf, len, v);
}

static void csv_field(ss_strbuf *b, const char *s)
{
    if (strpbrk(s, ",\"\r\n") == NULL) {
        strbuf_append(b, s, strlen(s));
        return;
    }
    strbuf_append(b, "\"", 1);
    for (; *s; s++) {
        if (*s == '"')
            strbuf_append(b, "\"", 1);
        strbuf_append(b, s, 1);
    }
    strbuf_append(b, "\"", 1);
}

ss_status ss_table_write_csv(const ss_table *t, const char *path, ss_error *err)
{
    ss_strbuf b = {0};
    if (t->has_labels) {
        csv_field(&b, t->label_col);
        strbuf_append(&b, ",", 1);
    }
    for (int j = 0; j < t->n_cols; j++) {
        if (j)
            strbuf_append(&b, ",", 1);
        csv_field(&b, t->col_names[j]);
    }
    strbuf_append(&b, "\n", 1);
    char num[40];
    for (int i = 0; i < t->n_rows; i++) {
        if (t->has_labels) {
            csv_field(&b, t->row_labels[i]);
            strbuf_append(&b, ",", 1);
        }
        const double *row = t->data + (size_t)i * (size_t)t->n_cols;
        for (int j = 0; j < t->n_cols; j++) {
            if (j)
                strbuf_append(&b, ",", 1);
            int n = output_format_double(num, sizeof num, row[j]);
            strbuf_append(&b, num, (size_t)n);
        }
        strbuf_append(&b, "\n", 1);
    }
    return output_write_strbuf(&b, path, err);
}
