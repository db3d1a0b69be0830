/* Writers: CSV tables, the text report, SVG plots; atomic file replacement. */
#ifndef SS_OUTPUT_H
#define SS_OUTPUT_H

#include <stdio.h>

#include "util/sha256.h"
#include "util/util.h"

/* Writes the bytes to path through a fresh temporary file in the same folder (flushed to disk)
 * and a rename, so an interrupted run leaves the old file or none (atomic.c). */
SS_HIDDEN ss_status output_write_atomic(const char *path, const char *data, size_t len,
                                        ss_error *err);
/* The same in steps, for output too large to build in memory first: open (the temporary
 * file), write any number of times (a failure is kept and reported by commit), then commit
 * (flush, rename) or abort (remove the temporary file). */
typedef struct output_file {
    const char *path;
    char *tmp;
    int fd;
    int failed, err_no;
    int slot;                /* the temporary name's registry slot */
    sha256_ctx hash;         /* of the bytes written so far */
    unsigned long long size; /* bytes written */
} output_file;
SS_HIDDEN ss_status output_atomic_open(output_file *f, const char *path, ss_error *err);
SS_HIDDEN void output_atomic_write(output_file *f, const char *data, size_t len);
SS_HIDDEN ss_status output_atomic_commit(output_file *f, ss_error *err);
SS_HIDDEN void output_atomic_abort(output_file *f);

/* The registry of names of files that exist only while a run writes (temporary and staged
 * files), which ss_output_remove_temporaries removes on a signal. register: the name stays the
 * caller's and must stay valid until release; returns the slot, -1 when all are taken.
 * output_temp_digest: the SHA-256 and size of the last file the atomic writer committed to the
 * slot's name (1), or 0 when none was. */
#define OUTPUT_MAX_TEMPORARIES 256
/* A key,value row of a run manifest (outset.c); both strings from ss_alloc. */
typedef struct kv_pair {
    char *key;
    char *value;
} kv_pair;
/* Reads a run manifest (key,value CSV as ss_outset_commit writes it). *out (n rows, the header
 * excluded) is the caller's to free with manifest_free. who: the name errors are reported
 * under (NULL: path). Returns SS_OK, SS_ERR_IO, SS_ERR_INPUT (malformed), SS_ERR_NOMEM. */
SS_HIDDEN ss_status manifest_read(const char *path, kv_pair **out, int *n, const char *who,
                                  ss_error *err);
SS_HIDDEN void manifest_free(kv_pair *kv, int n);
/* The value of key in rows kv[0..n-1], NULL when absent. */
SS_HIDDEN const char *manifest_get(const kv_pair *kv, int n, const char *key);
SS_HIDDEN int output_temp_register(const char *name);
SS_HIDDEN void output_temp_release(int slot);
SS_HIDDEN int output_temp_digest(int slot, unsigned char digest[32], unsigned long long *size);
/* A CSV file written as it is formatted (RFC 4180 quoting, LF line ends, shortest round-trip
 * numbers), atomically: open, any number of fields, numbers and characters, then commit (or
 * abort). A write failure is kept and reported by commit. */
typedef struct csv_out {
    output_file f;
    char *buf;
    size_t len;
} csv_out;
SS_HIDDEN ss_status csv_open(csv_out *o, const char *path, ss_error *err);
SS_HIDDEN void csv_field(csv_out *o, const char *s); /* quoted when it must be */
SS_HIDDEN void csv_field_after(csv_out *o, const char *s); /* a comma, then the field */
SS_HIDDEN void csv_char(csv_out *o, char c);
SS_HIDDEN void csv_number(csv_out *o, double v, int comma_before);
SS_HIDDEN ss_status csv_commit(csv_out *o, ss_error *err);
SS_HIDDEN void csv_abort(csv_out *o);
/* Writes a buffer with output_write_atomic (SS_ERR_NOMEM when the buffer's growth failed) and
 * clears it either way. */
SS_HIDDEN ss_status output_write_strbuf(ss_strbuf *b, const char *path, ss_error *err);
/* Reads a CSV file for ss_table_read_csv (a regular file, at most the CSV size limit, not
 * empty) into b; then table_parse_csv makes the table of its text (changed in place; path names
 * it in messages). csvread.c. */
SS_HIDDEN ss_status csv_read_bytes(const char *path, ss_strbuf *b, ss_error *err);
SS_HIDDEN ss_status table_parse_csv(const char *path, char *text, ss_table **out, ss_error *err);
/* The one text column stagesim writes in a numbers table: a study's points table names there
 * the first limit a point fails (runner.c). The reader takes a column of this header as the
 * table's row labels, written back in the same place. */
#define TABLE_TEXT_COL "failed_limit"
/* Appends text for XML element content or an attribute value: & < > " as entities, control
 * characters XML 1.0 does not allow as spaces, every byte that is not part of well-formed UTF-8
 * as U+FFFD, so any netlist name or title keeps the document well-formed (xml.c). */
SS_HIDDEN void xml_put_text(ss_strbuf *b, const char *text);
/* File i of an output set (outset.c), in the order reserved: *name the base name inside the
 * set's folder or else the path as given, *staged where it was written (NULL: reserved but not
 * written). Returns 0, or -1 past the last file. What the HTML report reads its plots from. */
SS_HIDDEN int outset_written(const ss_outset *s, int i, const char **name, const char **staged);
/* Shortest text that reads back as the same double (fmt_double.h); "" for NaN. */
SS_HIDDEN int output_format_double(char *buf, size_t len, double v);

/* The text report's device tables (report.c), also the HTML page's: for each kind that has
 * one, in the registry's order, fn(ctx, heading, line) -- the kind's heading with its first
 * line, NULL with the others. */
typedef void (*report_line_fn)(void *ctx, const char *heading, const char *line);
SS_HIDDEN void report_device_tables(const ss_solver *sv, report_line_fn fn, void *ctx);

#endif
