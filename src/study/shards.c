/* Shards of a study: the identity a study notes in its run's manifest (so shards of one study
 * are recognised, and nothing else is taken for one), and merging shards back into the table of
 * the unsharded run, refusing anything that does not add up. Running the points is runner.c's. */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "output/output.h"
#include "study/study.h"
#include "util/sha256.h"

#define MANIFEST_NAME "run_manifest.csv"

static ss_status nomem(ss_error *err) { return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory"); }

/* The identity rows every shard of one study shares, in the order they are noted. */
static const char *const SHARED_KEYS[] = {"study", "study_id", "seed", "trials", "points"};

ss_status ss_study_note_identity(const ss_study *s, const char *command, ss_outset *set,
                                 ss_error *err)
{
    ss_strbuf text = {0};
    long first, end, total;
    strbuf_printf(&text, "stagesim study\ncommand %s\n", command);
    ss_status st = study_identity(s, &text, &first, &end, &total, err);
    if (st != SS_OK) {
        strbuf_clear(&text);
        return st;
    }
    char id[65];
    ss_sha256_hex(text.data, text.len, id);
    strbuf_clear(&text);
    int k, n;
    unsigned long long seed;
    long trials;
    study_shard(s, &k, &n, &seed, &trials);
    char v_seed[32], v_trials[32], v_points[32], v_shard[48], v_first[32], v_end[32];
    snprintf(v_seed, sizeof v_seed, "%llu", seed);
    snprintf(v_trials, sizeof v_trials, "%ld", trials);
    snprintf(v_points, sizeof v_points, "%ld", total);
    snprintf(v_shard, sizeof v_shard, "%d/%d", k, n);
    snprintf(v_first, sizeof v_first, "%ld", first);
    snprintf(v_end, sizeof v_end, "%ld", end);
    const char *rows[][2] = {{"study", command},       {"study_id", id},
                             {"seed", v_seed},         {"trials", v_trials},
                             {"points", v_points},     {"shard", v_shard},
                             {"first_point", v_first}, {"end_point", v_end}};
    for (size_t i = 0; i < sizeof rows / sizeof rows[0] && st == SS_OK; i++)
        st = ss_outset_note(set, rows[i][0], rows[i][1], err);
    return st == SS_OK ? ss_outset_note_circuit(set, study_nominal(s), err) : st;
}

/* ---- merging -------------------------------------------------------------------------- */

/* A row of a shard: its numbers and its text (the first failing limit), when it has one. */
typedef struct merge_row {
    const double *d;
    const char *label;
} merge_row;

static int cmp_point(const void *a, const void *b)
{
    double x = ((const merge_row *)a)->d[0], y = ((const merge_row *)b)->d[0];
    return (x > y) - (x < y);
}

ss_status ss_study_merge(ss_table *const *shards, int n_shards, ss_table **out_points,
                         ss_error *err)
{
    if (n_shards < 1)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "merge: no shard files");
    const ss_table *a = shards[0];
    if (a->n_cols < 2 || strcmp(a->col_names[0], "point") != 0 || study_first_figure_col(a) < 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "merge: the first file is not a study table");
    long total = 0;
    for (int i = 0; i < n_shards; i++) {
        const ss_table *b = shards[i];
        if (b->n_cols != a->n_cols || b->has_labels != a->has_labels ||
            (a->has_labels && (b->label_at != a->label_at || strcmp(a->label_col, b->label_col))))
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "merge: shard %d has %d columns, the first has %d", i + 1,
                           b->n_cols + b->has_labels, a->n_cols + a->has_labels);
        for (int j = 0; j < a->n_cols; j++)
            if (strcmp(a->col_names[j], b->col_names[j]) != 0)
                return err_set(err, SS_ERR_INPUT, NULL, 0,
                               "merge: shard %d's column %d is '%s', the first's is '%s'", i + 1,
                               j + 1, b->col_names[j], a->col_names[j]);
        total += b->n_rows;
    }
    merge_row *rows = ss_alloc((size_t)(total ? total : 1) * sizeof *rows);
    if (!rows)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    long k = 0;
    for (int i = 0; i < n_shards; i++)
        for (int r = 0; r < shards[i]->n_rows; r++, k++) {
            rows[k].d = shards[i]->data + (size_t)r * (size_t)a->n_cols;
            rows[k].label = a->has_labels ? shards[i]->row_labels[r] : NULL;
        }
    qsort(rows, (size_t)total, sizeof *rows, cmp_point);
    for (long i = 0; i < total; i++)
        if (rows[i].d[0] != (double)i) {
            double got = rows[i].d[0];
            ss_free(rows);
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "merge: point %ld is %s (got point %.0f there)", i,
                           got < (double)i ? "duplicated" : "missing", got);
        }
    ss_table *t = table_create(a->n_cols, a->has_labels ? a->label_col : NULL);
    int bad = !t || table_reserve(t, (int)(total ? total : 1)) != 0;
    if (!bad)
        t->label_at = a->label_at;
    for (int j = 0; !bad && j < a->n_cols; j++)
        bad |= table_set_col(t, j, a->col_names[j]) != 0;
    for (long i = 0; !bad && i < total; i++) {
        double *row = table_add_row(t, rows[i].label);
        if (!row)
            bad = 1;
        else
            memcpy(row, rows[i].d, (size_t)a->n_cols * sizeof *row);
    }
    ss_free(rows);
    if (bad) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    *out_points = t;
    return SS_OK;
}


/* One shard file as merge sees it: its manifest, its shard number, its point range. */
typedef struct shard_in {
    const char *path;
    kv_pair *kv;
    int n_kv;
    int k, n;
    long first, end;
    ss_table *t;
} shard_in;

static int parse_long_exact(const char *t, long *out)
{
    if (!t || !*t)
        return -1;
    char *end;
    errno = 0;
    long v = strtol(t, &end, 10);
    if (*end || errno || v < 0)
        return -1;
    *out = v;
    return 0;
}

/* Reads the manifest beside a shard file and checks the file against it. */
/* "K/N" with 1 <= K <= N, each a plain whole number. */
static int parse_shard(const char *t, int *k, int *n)
{
    char buf[64];
    const char *slash = t ? strchr(t, '/') : NULL;
    long a, b;
    if (!slash || (size_t)(slash - t) >= sizeof buf)
        return -1;
    memcpy(buf, t, (size_t)(slash - t));
    buf[slash - t] = '\0';
    if (parse_long_exact(buf, &a) != 0 || parse_long_exact(slash + 1, &b) != 0 || a < 1 ||
        a > b || b > 100000000L)
        return -1;
    *k = (int)a;
    *n = (int)b;
    return 0;
}

/* Reads the manifest beside a shard file, checks the file against it and reads its table. */
static ss_status shard_open(shard_in *sh, ss_error *err)
{
    char man[PATH_MAX];
    const char *slash = strrchr(sh->path, '/');
    const char *base = slash ? slash + 1 : sh->path;
    int dir_len = slash ? (int)(slash - sh->path) : 0;
    if (snprintf(man, sizeof man, "%.*s%s%s", dir_len, sh->path, slash ? "/" : "",
                 MANIFEST_NAME) >= (int)sizeof man)
        return err_set(err, SS_ERR_LIMIT, sh->path, 0, "path too long");
    if (access(man, F_OK) != 0)
        return err_set(err, SS_ERR_INPUT, sh->path, 0,
                       "no %s beside it: merge takes the study.csv files that spread or sweep "
                       "wrote, each in its own folder with the manifest its run wrote",
                       MANIFEST_NAME);
    ss_status st = manifest_read(man, &sh->kv, &sh->n_kv, NULL, err);
    if (st != SS_OK)
        return st;
    const char *study = manifest_get(sh->kv, sh->n_kv, "study");
    if (!study || (strcmp(study, "spread") != 0 && strcmp(study, "sweep") != 0))
        return err_set(err, SS_ERR_INPUT, sh->path, 0,
                       "%s beside it is not that of a spread or sweep run", MANIFEST_NAME);
    for (size_t i = 0; i < sizeof SHARED_KEYS / sizeof SHARED_KEYS[0]; i++)
        if (!manifest_get(sh->kv, sh->n_kv, SHARED_KEYS[i]))
            return err_set(err, SS_ERR_INPUT, man, 0, "no '%s' row", SHARED_KEYS[i]);
    if (parse_shard(manifest_get(sh->kv, sh->n_kv, "shard"), &sh->k, &sh->n) != 0 ||
        parse_long_exact(manifest_get(sh->kv, sh->n_kv, "first_point"), &sh->first) != 0 ||
        parse_long_exact(manifest_get(sh->kv, sh->n_kv, "end_point"), &sh->end) != 0 ||
        sh->end < sh->first)
        return err_set(err, SS_ERR_INPUT, man, 0,
                       "malformed shard rows (shard, first_point, end_point)");
    char key[PATH_MAX + 16];
    snprintf(key, sizeof key, "file_sha256(%s)", base);
    const char *want = manifest_get(sh->kv, sh->n_kv, key);
    if (!want)
        return err_set(err, SS_ERR_INPUT, sh->path, 0, "its run's %s does not list '%s'",
                       MANIFEST_NAME, base);
    /* read once: the bytes hashed are the bytes parsed */
    ss_strbuf bytes = {0};
    if ((st = csv_read_bytes(sh->path, &bytes, err)) != SS_OK)
        return st;
    char have[65];
    ss_sha256_hex(bytes.data, bytes.len, have);
    if (strcmp(have, want) != 0)
        st = err_set(err, SS_ERR_INPUT, sh->path, 0,
                     "the file is not as its run wrote it (cut short, edited or replaced: "
                     "SHA-256 %.12s..., the manifest has %.12s...)",
                     have, want);
    if (st == SS_OK)
        st = table_parse_csv(sh->path, bytes.data, &sh->t, err);
    strbuf_clear(&bytes);
    return st;
}

/* The first identity row in which two shards differ, for the message; NULL when none. */
static const char *first_difference(const shard_in *a, const shard_in *b)
{
    static const char *const order[] = {"study", "seed", "trials", "points", "study_id"};
    for (size_t i = 0; i < sizeof order / sizeof order[0]; i++)
        if (strcmp(manifest_get(a->kv, a->n_kv, order[i]), manifest_get(b->kv, b->n_kv, order[i])) !=
            0)
            return order[i];
    return NULL;
}

static ss_status check_shards(shard_in *sh, int n, ss_error *err)
{
    const shard_in *a = &sh[0];
    for (int i = 1; i < n; i++) {
        const char *d = first_difference(a, &sh[i]);
        if (d)
            return err_set(err, SS_ERR_INPUT, sh[i].path, 0,
                           "a shard of another study than %s (%s differs%s)", a->path,
                           strcmp(d, "study_id") == 0 ? "the netlist, an include, the limits or "
                                                        "an option"
                                                      : d,
                           strcmp(d, "study_id") == 0 ? "" : " among others");
        if (sh[i].n != a->n)
            return err_set(err, SS_ERR_INPUT, sh[i].path, 0,
                           "shard %d/%d, but %s is shard %d/%d: the shards of one study share N",
                           sh[i].k, sh[i].n, a->path, a->k, a->n);
    }
    if (n != a->n || n < 1) {
        /* name the missing ones (or the repeated one) */
        for (int k = 1; k <= a->n; k++) {
            int count = 0;
            for (int i = 0; i < n; i++)
                count += sh[i].k == k;
            if (count == 0)
                return err_set(err, SS_ERR_INPUT, NULL, 0,
                               "merge: shard %d of %d is missing (%d file%s given)", k, a->n, n,
                               n == 1 ? "" : "s");
        }
    }
    for (int i = 0; i < n; i++)
        for (int j = 0; j < i; j++)
            if (sh[i].k == sh[j].k)
                return err_set(err, SS_ERR_INPUT, sh[i].path, 0,
                               "shard %d/%d again (also %s)", sh[i].k, sh[i].n, sh[j].path);
    for (int i = 0; i < n; i++) {
        const ss_table *t = sh[i].t;
        long rows = t->n_rows;
        int ok = rows == sh[i].end - sh[i].first && t->n_cols > 0 &&
                 strcmp(t->col_names[0], "point") == 0;
        for (long r = 0; ok && r < rows; r++)
            ok = t->data[(size_t)r * (size_t)t->n_cols] == (double)(sh[i].first + r);
        if (!ok)
            return err_set(err, SS_ERR_INPUT, sh[i].path, 0,
                           "does not hold exactly the points %ld to %ld of shard %d/%d", sh[i].first,
                           sh[i].end - 1, sh[i].k, sh[i].n);
    }
    return SS_OK;
}

ss_status ss_study_merge_files(const char *const *paths, int n, ss_outset *set,
                               ss_table **out_points, ss_error *err)
{
    if (n < 1)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "merge: no shard files");
    shard_in *sh = ss_alloc((size_t)n * sizeof *sh);
    ss_table **tabs = ss_alloc((size_t)n * sizeof *tabs);
    ss_status st = sh && tabs ? SS_OK : nomem(err);
    for (int i = 0; i < n && st == SS_OK; i++) {
        sh[i].path = paths[i];
        st = shard_open(&sh[i], err);
    }
    if (st == SS_OK)
        st = check_shards(sh, n, err);
    /* merged in shard order: the rows of shard k are the points before those of shard k+1 */
    for (int i = 0; st == SS_OK && i < n; i++)
        tabs[i] = sh[i].t;
    ss_table *merged = NULL;
    if (st == SS_OK)
        st = ss_study_merge(tabs, n, &merged, err);
    if (st == SS_OK && set) {
        /* the identity of the whole study, in the order its unsharded run notes it */
        const shard_in *a = &sh[0];
        for (size_t j = 0; j < sizeof SHARED_KEYS / sizeof SHARED_KEYS[0] && st == SS_OK; j++)
            st = ss_outset_note(set, SHARED_KEYS[j], manifest_get(a->kv, a->n_kv, SHARED_KEYS[j]),
                                err);
        char v_end[32];
        snprintf(v_end, sizeof v_end, "%d", ss_table_rows(merged));
        if (st == SS_OK)
            st = ss_outset_note(set, "shard", "1/1", err);
        if (st == SS_OK)
            st = ss_outset_note(set, "first_point", "0", err);
        if (st == SS_OK)
            st = ss_outset_note(set, "end_point", v_end, err);
        for (int i = 0; i < a->n_kv && st == SS_OK; i++) {
            const char *k = a->kv[i].key;
            if (strncmp(k, "input_sha256(", 13) == 0 || strcmp(k, "netlist") == 0)
                st = ss_outset_note(set, k, a->kv[i].value, err);
        }
    }
    for (int i = 0; sh && i < n; i++) {
        manifest_free(sh[i].kv, sh[i].n_kv);
        ss_table_destroy(&sh[i].t);
    }
    ss_free(sh);
    ss_free(tabs);
    if (st != SS_OK) {
        ss_table_destroy(&merged);
        return st;
    }
    *out_points = merged;
    return SS_OK;
}
