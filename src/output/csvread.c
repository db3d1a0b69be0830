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

ss_status ss_table_read_csv(const char *path, ss_table **out, ss_error *err)
{
    ss_strbuf b = {0};
    int sys_errno;
    int rc = strbuf_read_file(&b, path, CSV_READ_MAX_BYTES, &sys_errno);
    if (rc != SS_READ_OK || b.len == 0) {
        strbuf_clear(&b);
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
    enum { MAX_FIELDS = 100000 };
    char **fields = ss_alloc(MAX_FIELDS * sizeof *fields);
    ss_table *t = NULL;
    ss_status st = SS_OK;
    int line_no = 0, n_cols = 0;
    char *p = b.data;
    while (st == SS_OK && fields && *p) {
        char *nl = strchr(p, '\n');
        if (nl)
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
            t = table_create(n, NULL);
            for (int j = 0; t && j < n; j++)
                if (table_set_col(t, j, fields[j]) != 0)
                    st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
            if (!t)
                st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        } else if (n == 1 && fields[0][0] == '\0') {
            /* blank line */
        } else if (n != n_cols) {
            st = err_set(err, SS_ERR_INPUT, path, line_no, "%d fields, the header has %d", n,
                         n_cols);
        } else {
            double *row = table_add_row(t, NULL);
            if (!row)
                st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
            for (int j = 0; row && j < n; j++) {
                char *end;
                row[j] = fields[j][0] ? strtod(fields[j], &end) : SS_NAN;
                if (fields[j][0] && *end)
                    st = err_set(err, SS_ERR_INPUT, path, line_no, "'%s' is not a number",
                                 fields[j]);
            }
        }
        if (!nl)
            break;
        p = nl + 1;
    }
    if (!fields)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    ss_free(fields);
    strbuf_clear(&b);
    if (st == SS_OK && !t)
        st = err_set(err, SS_ERR_INPUT, path, 0, "empty file");
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out = t;
    return SS_OK;
}
