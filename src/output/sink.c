/* The table sink (rows kept in an ss_table), the callback sink (a caller's functions), the tee
 * (every row to two sinks) and a whole table sent to a sink. The CSV sink is csv_stream.c's. */
#include <string.h>

#include "output/sink.h"
#include "util/table.h"

typedef struct table_sink {
    ss_sink base;
    ss_table *t;
} table_sink;

static ss_status ts_begin(ss_sink *s, const char *label_col, int n_cols,
                          const char *const *names, long n_rows, ss_error *err)
{
    table_sink *ts = (table_sink *)s;
    ss_table_destroy(&ts->t);
    ts->t = table_create(n_cols, label_col);
    int bad = !ts->t;
    for (int c = 0; !bad && c < n_cols; c++)
        bad = table_set_col(ts->t, c, names[c]) != 0;
    if (!bad && n_rows > 0 && n_rows < (long)1 << 30)
        bad = table_reserve(ts->t, (int)n_rows) != 0;
    if (bad) {
        ss_table_destroy(&ts->t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    return SS_OK;
}

static ss_status ts_row(ss_sink *s, const char *label, const double *values, ss_error *err)
{
    table_sink *ts = (table_sink *)s;
    double *row = table_add_row(ts->t, label);
    if (!row)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    memcpy(row, values, (size_t)s->n_cols * sizeof *row);
    return SS_OK;
}

static ss_status ts_end(ss_sink *s, ss_status st, ss_error *err)
{
    (void)err;
    if (st != SS_OK)
        ss_table_destroy(&((table_sink *)s)->t);
    return st;
}

static void ts_destroy(ss_sink *s) { ss_table_destroy(&((table_sink *)s)->t); }

ss_status ss_sink_table(ss_sink **out, ss_error *err)
{
    table_sink *ts = ss_alloc(sizeof *ts);
    if (!ts)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    ts->base = (ss_sink){ts_begin, ts_row, ts_end, ts_destroy, 0, NULL};
    *out = &ts->base;
    return SS_OK;
}

ss_table *ss_sink_take_table(ss_sink *s)
{
    if (!s || s->begin != ts_begin)
        return NULL;
    table_sink *ts = (table_sink *)s;
    ss_table *t = ts->t;
    ts->t = NULL;
    return t;
}

typedef struct callback_sink {
    ss_sink base;
    ss_sink_callbacks cb;
    void *ctx;
} callback_sink;

static ss_status cs_status(int rc, const char *what, ss_error *err)
{
    return rc == 0 ? SS_OK : err_set(err, SS_ERR_IO, NULL, 0, "sink: %s refused (%d)", what, rc);
}

static ss_status cs_begin(ss_sink *s, const char *label_col, int n_cols,
                          const char *const *names, long n_rows, ss_error *err)
{
    (void)label_col; /* given with each row's label */
    callback_sink *cs = (callback_sink *)s;
    return cs->cb.begin ? cs_status(cs->cb.begin(cs->ctx, n_cols, names, n_rows), "begin", err)
                        : SS_OK;
}

static ss_status cs_row(ss_sink *s, const char *label, const double *values, ss_error *err)
{
    callback_sink *cs = (callback_sink *)s;
    if (label && cs->cb.label) {
        ss_status st = cs_status(cs->cb.label(cs->ctx, s->label_col, label), "label", err);
        if (st != SS_OK)
            return st;
    }
    return cs->cb.row ? cs_status(cs->cb.row(cs->ctx, values, s->n_cols), "row", err) : SS_OK;
}

static ss_status cs_end(ss_sink *s, ss_status st, ss_error *err)
{
    callback_sink *cs = (callback_sink *)s;
    if (!cs->cb.end)
        return st;
    int rc = cs->cb.end(cs->ctx, st == SS_OK);
    return st != SS_OK ? st : cs_status(rc, "end", err);
}

static void cs_destroy(ss_sink *s) { (void)s; }

ss_status ss_sink_create(const ss_sink_callbacks *cb, void *ctx, ss_sink **out, ss_error *err)
{
    if (!cb)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "ss_sink_create: no callbacks");
    callback_sink *cs = ss_alloc(sizeof *cs);
    if (!cs)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    cs->base = (ss_sink){cs_begin, cs_row, cs_end, cs_destroy, 0, NULL};
    cs->cb = *cb;
    cs->ctx = ctx;
    *out = &cs->base;
    return SS_OK;
}

typedef struct tee_sink {
    ss_sink base;
    ss_sink *a, *b;
} tee_sink;

static ss_status tee_begin(ss_sink *s, const char *label_col, int n_cols,
                           const char *const *names, long n_rows, ss_error *err)
{
    tee_sink *t = (tee_sink *)s;
    ss_status st = sink_begin_labelled(t->a, label_col, n_cols, names, n_rows, err);
    if (st != SS_OK)
        return st;
    st = sink_begin_labelled(t->b, label_col, n_cols, names, n_rows, err);
    if (st != SS_OK) {
        ss_error ignored = {0};
        sink_end(t->a, st, &ignored); /* a began: let it discard what it started */
    }
    return st;
}

static ss_status tee_row(ss_sink *s, const char *label, const double *values, ss_error *err)
{
    tee_sink *t = (tee_sink *)s;
    ss_status st = sink_row_labelled(t->a, label, values, err);
    return st == SS_OK ? sink_row_labelled(t->b, label, values, err) : st;
}

/* Both ends are called whatever the first says, so neither keeps a half-done file; the first
 * error is kept. */
static ss_status tee_end(ss_sink *s, ss_status st, ss_error *err)
{
    tee_sink *t = (tee_sink *)s;
    ss_status sa = sink_end(t->a, st, err);
    ss_error eb = {0};
    ss_status sb = sink_end(t->b, sa, sa == SS_OK ? err : &eb);
    return sa != SS_OK ? sa : sb;
}

static void tee_destroy(ss_sink *s) { (void)s; }

ss_status ss_sink_tee(ss_sink *a, ss_sink *b, ss_sink **out, ss_error *err)
{
    if (!a || !b)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "ss_sink_tee: a sink is missing");
    tee_sink *t = ss_alloc(sizeof *t);
    if (!t)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    t->base = (ss_sink){tee_begin, tee_row, tee_end, tee_destroy, 0, NULL};
    t->a = a;
    t->b = b;
    *out = &t->base;
    return SS_OK;
}

ss_status sink_send_table(ss_sink *s, const ss_table *t, ss_error *err)
{
    ss_status st = sink_begin_labelled(s, t->has_labels ? t->label_col : NULL, t->n_cols,
                                       t->col_names, t->n_rows, err);
    if (st != SS_OK)
        return st;
    for (int i = 0; i < t->n_rows && st == SS_OK; i++)
        st = sink_row_labelled(s, t->has_labels ? t->row_labels[i] : NULL,
                               t->data + (size_t)i * (size_t)t->n_cols, err);
    return sink_end(s, st, err);
}

void ss_sink_destroy(ss_sink **ps)
{
    if (!ps || !*ps)
        return;
    (*ps)->destroy(*ps);
    ss_free(*ps);
    *ps = NULL;
}
