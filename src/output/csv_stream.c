/* The CSV sink: rows written to a file as an analysis produces them, atomically (a failed run
 * leaves the old file or none). Rows go from the solving thread to a writing thread through
 * CSV_RING slots, so the text of one row is made while the next is solved. Below
 * CSV_THREAD_MIN values in all the thread is not worth its start and one thread does both.
 * The bytes are those ss_table_write_csv writes of the same rows. */
#include <pthread.h>
#include <string.h>

#include "output/output.h"
#include "output/sink.h"

#define CSV_RING 4
#define CSV_THREAD_MIN 200000.0

typedef struct csv_sink {
    ss_sink base;
    const char *path;
    csv_out o;
    int open, threaded;
    pthread_t writer;
    pthread_mutex_t mu;
    pthread_cond_t cv;
    double *slot[CSV_RING];
    long produced, consumed;
    int done;
} csv_sink;

static void write_row(csv_out *o, const double *v, int n)
{
    for (int c = 0; c < n; c++)
        csv_number(o, v[c], c > 0);
    csv_char(o, '\n');
}

static void *writer_main(void *arg)
{
    csv_sink *s = arg;
    for (;;) {
        pthread_mutex_lock(&s->mu);
        while (s->consumed == s->produced && !s->done)
            pthread_cond_wait(&s->cv, &s->mu);
        int have = s->consumed < s->produced;
        pthread_mutex_unlock(&s->mu);
        if (!have)
            return NULL;
        write_row(&s->o, s->slot[s->consumed % CSV_RING], s->base.n_cols);
        pthread_mutex_lock(&s->mu);
        s->consumed++;
        pthread_cond_broadcast(&s->cv);
        pthread_mutex_unlock(&s->mu);
    }
}

static ss_status start_writer(csv_sink *s, ss_error *err)
{
    for (int r = 0; r < CSV_RING; r++)
        if (!(s->slot[r] = ss_alloc((size_t)s->base.n_cols * sizeof *s->slot[r])))
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    pthread_mutex_init(&s->mu, NULL);
    pthread_cond_init(&s->cv, NULL);
    if (pthread_create(&s->writer, NULL, writer_main, s) != 0) {
        pthread_mutex_destroy(&s->mu);
        pthread_cond_destroy(&s->cv);
        return SS_OK; /* no thread: this one writes */
    }
    s->threaded = 1;
    return SS_OK;
}

static void stop_writer(csv_sink *s)
{
    if (!s->threaded)
        return;
    pthread_mutex_lock(&s->mu);
    s->done = 1;
    pthread_cond_broadcast(&s->cv);
    pthread_mutex_unlock(&s->mu);
    pthread_join(s->writer, NULL);
    pthread_mutex_destroy(&s->mu);
    pthread_cond_destroy(&s->cv);
    s->threaded = 0;
}

/* A labelled table (op.csv, a metric,value summary) is written by this thread: it is short,
 * and the ring carries numbers only. */
static ss_status cv_begin(ss_sink *b, const char *label_col, int n_cols,
                          const char *const *names, long n_rows, ss_error *err)
{
    csv_sink *s = (csv_sink *)b;
    ss_status st = csv_open(&s->o, s->path, err);
    if (st != SS_OK)
        return st;
    s->open = 1;
    if (label_col) {
        csv_field(&s->o, label_col);
        csv_char(&s->o, ',');
    }
    for (int c = 0; c < n_cols; c++) {
        if (c > 0)
            csv_char(&s->o, ',');
        csv_field(&s->o, names[c]);
    }
    csv_char(&s->o, '\n');
    if (!label_col && (double)n_rows * n_cols >= CSV_THREAD_MIN)
        return start_writer(s, err);
    return SS_OK;
}

static ss_status cv_row(ss_sink *b, const char *label, const double *v, ss_error *err)
{
    (void)err;
    csv_sink *s = (csv_sink *)b;
    if (!s->threaded) {
        if (b->label_col) {
            csv_field(&s->o, label ? label : "");
            csv_char(&s->o, ',');
        }
        write_row(&s->o, v, b->n_cols);
        return SS_OK;
    }
    pthread_mutex_lock(&s->mu); /* wait for a free slot */
    while (s->produced - s->consumed == CSV_RING)
        pthread_cond_wait(&s->cv, &s->mu);
    pthread_mutex_unlock(&s->mu);
    memcpy(s->slot[s->produced % CSV_RING], v, (size_t)b->n_cols * sizeof *v);
    pthread_mutex_lock(&s->mu);
    s->produced++;
    pthread_cond_broadcast(&s->cv);
    pthread_mutex_unlock(&s->mu);
    return SS_OK;
}

static ss_status cv_end(ss_sink *b, ss_status st, ss_error *err)
{
    csv_sink *s = (csv_sink *)b;
    stop_writer(s);
    if (!s->open)
        return st;
    s->open = 0;
    if (st == SS_OK)
        return csv_commit(&s->o, err);
    csv_abort(&s->o);
    return st;
}

static void cv_destroy(ss_sink *b)
{
    csv_sink *s = (csv_sink *)b;
    stop_writer(s);
    if (s->open)
        csv_abort(&s->o);
    for (int r = 0; r < CSV_RING; r++)
        ss_free(s->slot[r]);
    ss_free((char *)s->path);
}

ss_status ss_sink_csv(const char *path, ss_sink **out, ss_error *err)
{
    csv_sink *s = ss_alloc(sizeof *s);
    char *p = path ? ss_strdup(path) : NULL;
    if (!s || !p) {
        ss_free(s);
        ss_free(p);
        return path ? err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory")
                    : err_set(err, SS_ERR_INPUT, NULL, 0, "ss_sink_csv: no path");
    }
    s->base = (ss_sink){cv_begin, cv_row, cv_end, cv_destroy, 0, NULL};
    s->path = p;
    *out = &s->base;
    return SS_OK;
}
