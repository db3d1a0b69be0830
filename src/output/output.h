/* Writers: CSV tables, the text report, SVG plots; atomic file replacement. */
#ifndef SS_OUTPUT_H
#define SS_OUTPUT_H

#include <stdio.h>

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
} output_file;
SS_HIDDEN ss_status output_atomic_open(output_file *f, const char *path, ss_error *err);
SS_HIDDEN void output_atomic_write(output_file *f, const char *data, size_t len);
SS_HIDDEN ss_status output_atomic_commit(output_file *f, ss_error *err);
SS_HIDDEN void output_atomic_abort(output_file *f);
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
SS_HIDDEN void csv_char(csv_out *o, char c);
SS_HIDDEN void csv_number(csv_out *o, double v, int comma_before);
SS_HIDDEN ss_status csv_commit(csv_out *o, ss_error *err);
SS_HIDDEN void csv_abort(csv_out *o);
/* Writes a buffer with output_write_atomic (SS_ERR_NOMEM when the buffer's growth failed) and
 * clears it either way. */
SS_HIDDEN ss_status output_write_strbuf(ss_strbuf *b, const char *path, ss_error *err);
/* Shortest text that reads back as the same double (fmt_double.h); "" for NaN. */
SS_HIDDEN int output_format_double(char *buf, size_t len, double v);

#endif
