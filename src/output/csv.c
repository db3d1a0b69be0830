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

/* The file is written in chunks of CSV_CHUNK bytes as it is formatted: a sweep of millions of
 * values never sits in memory twice, and the buffer is never regrown and copied. */
#define CSV_CHUNK ((size_t)1 << 20)
#define CSV_MAX_NUMBER (FMT_DOUBLE_MAX_LEN + 1) /* a formatted double and its NUL */

static void csv_flush(csv_out *o)
{
    output_atomic_write(&o->f, o->buf, o->len);
    o->len = 0;
}

ss_status csv_open(csv_out *o, const char *path, ss_error *err)
{
    memset(o, 0, sizeof *o);
    o->buf = ss_alloc(CSV_CHUNK);
    if (!o->buf)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    ss_status st = output_atomic_open(&o->f, path, err);
    if (st != SS_OK) {
        ss_free(o->buf);
        o->buf = NULL;
    }
    return st;
}

static void csv_put(csv_out *o, const char *s, size_t n)
{
    while (n > 0) {
        if (o->len == CSV_CHUNK)
            csv_flush(o);
        size_t k = CSV_CHUNK - o->len < n ? CSV_CHUNK - o->len : n;
        memcpy(o->buf + o->len, s, k);
        o->len += k;
        s += k;
        n -= k;
    }
}

void csv_char(csv_out *o, char c)
{
    if (o->len == CSV_CHUNK)
        csv_flush(o);
    o->buf[o->len++] = c;
}

void csv_field(csv_out *o, const char *s)
{
    if (strpbrk(s, ",\"\r\n") == NULL) {
        csv_put(o, s, strlen(s));
        return;
    }
    csv_char(o, '"');
    for (; *s; s++) {
        if (*s == '"')
            csv_char(o, '"');
        csv_char(o, *s);
    }
    csv_char(o, '"');
}

void csv_field_after(csv_out *o, const char *s)
{
    csv_char(o, ',');
    csv_field(o, s);
}

void csv_number(csv_out *o, double v, int comma_before)
{
    if (CSV_CHUNK - o->len < CSV_MAX_NUMBER + 1)
        csv_flush(o);
    if (comma_before)
        o->buf[o->len++] = ',';
    o->len += (size_t)output_format_double(o->buf + o->len, CSV_MAX_NUMBER, v);
}

ss_status csv_commit(csv_out *o, ss_error *err)
{
    csv_flush(o);
    ss_free(o->buf);
    o->buf = NULL;
    return output_atomic_commit(&o->f, err);
}

void csv_abort(csv_out *o)
{
    ss_free(o->buf);
    o->buf = NULL;
    output_atomic_abort(&o->f);
}

ss_status ss_table_write_csv(const ss_table *t, const char *path, ss_error *err)
{
    csv_out o;
    ss_status st = csv_open(&o, path, err);
    if (st != SS_OK)
        return st;
    /* the labels in their column: before data column label_at (0 unless a table says) */
    int at = t->has_labels ? (t->label_at < 0 ? 0 : t->label_at > t->n_cols ? t->n_cols : t->label_at)
                           : -1;
    for (int j = 0; j <= t->n_cols; j++) {
        if (j == at) {
            if (j)
                csv_char(&o, ',');
            csv_field(&o, t->label_col);
            if (j < t->n_cols)
                csv_char(&o, ',');
        }
        if (j == t->n_cols)
            break;
        if (j && j != at)
            csv_char(&o, ',');
        csv_field(&o, t->col_names[j]);
    }
    csv_char(&o, '\n');
    for (int i = 0; i < t->n_rows && !o.f.failed; i++) {
        const double *row = t->data + (size_t)i * (size_t)t->n_cols;
        for (int j = 0; j <= t->n_cols; j++) {
            if (j == at) {
                if (j)
                    csv_char(&o, ',');
                csv_field(&o, t->row_labels[i]);
                if (j < t->n_cols)
                    csv_char(&o, ',');
            }
            if (j == t->n_cols)
                break;
            csv_number(&o, row[j], j > 0 && j != at);
        }
        csv_char(&o, '\n');
    }
    return csv_commit(&o, err);
}
