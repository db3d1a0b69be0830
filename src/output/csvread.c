/* Reads back the CSV files the writer produces (for merging study shards): a header line, then
 * rows of numbers; empty cells are NaN; RFC 4180 quoting in the header is understood. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "output/output.h"
#include "util/table.h"

/* A shard's study.csv of a million points is a few hundred MB (docs/studies.md) */
#define CSV_READ_MAX_BYTES ((size_t)1 << 30)
#define CSV_READ_MAX_TEXT "1 GiB"

/* Splits one CSV line into fields in place; returns the count (fields point into line). */
static int csv_split(char *line, char **fields, int max)
{
    int n = 0;
    char *p = line;
    for (;;) {
        if (n == max)
            return -1;
        if (*p == '"') {
            char *w = ++p;
            fields[n++] = w;
            while (*p) {
                if (*p == '"' && p[1] == '"') {
                    *w++ = '"';
                    p += 2;
                } else if (*p == '"') {
                    p++;
                    break;
                } else {
                    *w++ = *p++;
                }
            }
            char *end = w;
            if (*p && *p != ',')
                return -1;
            *end = '\0';
        } else {
            fields[n++] = p;
            while (*p && *p != ',')
                p++;
        }
        if (*p != ',') {
            *p = '\0';
            return n;
        }
        *p++ = '\0';
    }
}

/* A number exactly as the writer formats them (fmt_double.c): an optional minus, digits with
 * an optional fraction, an optional exponent; or inf / -inf. Anything else -- nan, hex,
 * spaces, a trailing letter -- is refused: a table read back must hold what was written. */
static int number_field(const char *f, double *out)
{
    const char *p = f;
    if (strcmp(f, "inf") == 0 || strcmp(f, "-inf") == 0) {
        *out = f[0] == '-' ? -HUGE_VAL : HUGE_VAL;
        return 0;
    }
    if (*p == '-')
        p++;
    int digits = 0;
    while (*p >= '0' && *p <= '9')
        p++, digits++;
    if (*p == '.') {
        p++;
        while (*p >= '0' && *p <= '9')
            p++, digits++;
    }
    if (!digits)
        return -1;
    if (*p == 'e') {
        p++;
        if (*p == '+' || *p == '-')
            p++;
        if (!(*p >= '0' && *p <= '9'))
            return -1;
        while (*p >= '0' && *p <= '9')
            p++;
    }
    if (*p)
        return -1;
    char *end;
    *out = strtod(f, &end);
    return *end == '\0' && isfinite(*out) ? 0 : -1;
}

ss_status csv_read_bytes(const char *path, ss_strbuf *b, ss_error *err)
{
    int sys_errno;
    int rc = strbuf_read_file(b, path, CSV_READ_MAX_BYTES, &sys_errno);
    if (rc != SS_READ_OK || b->len == 0) {
        strbuf_clear(b);
        if (rc == SS_READ_NOMEM)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        if (rc == SS_READ_TOO_LARGE)
            return err_set(err, SS_ERR_LIMIT, path, 0, "larger than %s, the limit for a CSV "
                           "table", CSV_READ_MAX_TEXT);
        if (rc == SS_READ_OPEN || rc == SS_READ_NOT_REGULAR)
            return err_set(err, SS_ERR_IO, path, 0, "cannot open: %s",
                           strbuf_read_error_text(rc, sys_errno));
        if (rc != SS_READ_OK)
            return err_set(err, SS_ERR_IO, path, 0, "read error: %s",
                           strbuf_read_error_text(rc, sys_errno));
        return err_set(err, SS_ERR_INPUT, path, 0, "empty file");
    }
    return SS_OK;
}

ss_status ss_table_read_csv(const char *path, ss_table **out, ss_error *err)
{
    ss_strbuf b = {0};
    ss_status st = csv_read_bytes(path, &b, err);
    if (st == SS_OK)
        st = table_parse_csv(path, b.data, out, err);
    strbuf_clear(&b);
    return st;
}

ss_status table_parse_csv(const char *path, char *text, ss_table **out, ss_error *err)
{
    enum { MAX_FIELDS = 100000 };
    char **fields = ss_alloc(MAX_FIELDS * sizeof *fields);
    ss_table *t = NULL;
    ss_status st = SS_OK;
    int line_no = 0, n_cols = 0, text_col = -1;
    char *p = text;
    while (st == SS_OK && fields && *p) {
        char *nl = strchr(p, '\n');
        if (!nl) {
            /* every line the writer makes ends in a line feed: this file was cut short */
            st = err_set(err, SS_ERR_INPUT, path, line_no + 1,
                         "the last line has no line end: the file was cut short");
            break;
        }
        *nl = '\0';
        size_t len = strlen(p);
        if (len && p[len - 1] == '\r')
            p[len - 1] = '\0';
        line_no++;
        int n = csv_split(p, fields, MAX_FIELDS);
        if (n < 0) {
            st = err_set(err, SS_ERR_INPUT, path, line_no, "malformed CSV line");
        } else if (line_no == 1) {
            n_cols = n;
            for (int j = 0; j < n && text_col < 0; j++)
                if (strcmp(fields[j], TABLE_TEXT_COL) == 0)
                    text_col = j;
            t = table_create(text_col < 0 ? n : n - 1, text_col < 0 ? NULL : TABLE_TEXT_COL);
            if (t)
                t->label_at = text_col < 0 ? 0 : text_col;
            for (int j = 0, c = 0; t && j < n; j++)
                if (j != text_col && table_set_col(t, c++, fields[j]) != 0)
                    st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
            if (!t)
                st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        } else if (n == 1 && fields[0][0] == '\0') {
            /* blank line */
        } else if (n != n_cols) {
            st = err_set(err, SS_ERR_INPUT, path, line_no, "%d fields, the header has %d", n,
                         n_cols);
        } else {
            double *row = table_add_row(t, text_col < 0 ? NULL : fields[text_col]);
            if (!row)
                st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
            for (int j = 0, c = 0; row && j < n && st == SS_OK; j++) {
                if (j == text_col)
                    continue;
                double *cell = &row[c++];
                if (fields[j][0] && number_field(fields[j], cell) != 0)
                    st = err_set(err, SS_ERR_INPUT, path, line_no,
                                 "'%.40s' in column %d is not a number as stagesim writes them",
                                 fields[j], j + 1);
            }
        }
        p = nl + 1;
    }
    if (!fields)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    ss_free(fields);
    if (st == SS_OK && !t)
        st = err_set(err, SS_ERR_INPUT, path, 0, "empty file");
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out = t;
    return SS_OK;
}
