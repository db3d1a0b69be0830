/* CSV writer for result tables: RFC 4180 quoting, LF line ends, round-trip numbers, written
 * atomically. What the tables hold is the analyses' business. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "output/fmt_double.h"
#include "output/output.h"
#include "util/table.h"

int output_format_double(char *buf, size_t len, double v)
{
    return fmt_double_shortest(buf, len, v);
}

ss_status output_write_atomic(const char *path, const char *data, size_t len, ss_error *err)
{
    size_t plen = strlen(path);
    char *tmp = ss_alloc(plen + 32);
    if (!tmp)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    snprintf(tmp, plen + 32, "%s.tmp%ld", path, (long)getpid());
    FILE *f = fopen(tmp, "wb");
    if (!f) {
        ss_status st = err_set(err, SS_ERR_IO, path, 0, "cannot write: %s", strerror(errno));
        ss_free(tmp);
        return st;
    }
    size_t put = fwrite(data, 1, len, f);
    int bad = put != len || fflush(f) != 0;
    bad |= fclose(f) != 0;
    if (bad || rename(tmp, path) != 0) {
        int e = errno;
        remove(tmp);
        ss_free(tmp);
        return err_set(err, SS_ERR_IO, path, 0, "cannot write: %s", strerror(e));
    }
    ss_free(tmp);
    return SS_OK;
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
    if (b.failed) {
        strbuf_clear(&b);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    ss_status st = output_write_atomic(path, b.data, b.len, err);
    strbuf_clear(&b);
    return st;
}
