/* Output sets: the files one run writes appear together, or not at all, with a manifest that
 * names the run, its inputs' and its files' SHA-256, so a reader can tell which files belong
 * together. Files are staged under hidden names beside their final ones and renamed at commit;
 * a lock file keeps two runs from committing into one folder at once. What the files hold is
 * their writers' business. docs/cli.md, "Output sets". */
#define _DEFAULT_SOURCE /* realpath, flock */
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include "output/output.h"

#define OUTSET_MANIFEST "run_manifest.csv"
#define OUTSET_LOCK ".stagesim.lock"
#define OUTSET_FILE_KEY "file_sha256("
#define OUTSET_MANIFEST_MAX_BYTES (16 << 20) /* a manifest is a few hundred bytes per file */

typedef struct outset_file {
    char *path;   /* as the caller gave it */
    char *canon;  /* canonical folder + '/' + base name: what collisions are judged on */
    char *staged; /* the hidden name it is written to until commit */
    char *what;   /* for messages: "op.csv", "--junit" */
    const char *in_dir_name; /* the base name when the file lies in the set's folder, else NULL */
    int slot;     /* staged name's registry slot */
    int done;     /* renamed into place */
} outset_file;

struct ss_outset {
    char *dir;
    char *dir_canon;
    int lock_fd;
    const char *lock_path; /* set while the lock is held */
    int lock_slot;         /* its registry slot (-1 none) */
    outset_file *files;
    int n_files, cap_files;
    kv_pair *notes;
    int n_notes, cap_notes;
    ss_arena arena;
};

static ss_status nomem(ss_error *err) { return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory"); }

ss_status ss_outset_open(const char *dir, ss_outset **out, ss_error *err)
{
    char canon[PATH_MAX];
    struct stat sb;
    if (!dir) { /* files only: staged and committed together, no folder, lock or manifest */
        ss_outset *s = ss_alloc(sizeof *s);
        if (!s)
            return nomem(err);
        s->lock_fd = -1;
        s->lock_slot = -1;
        *out = s;
        return SS_OK;
    }
    if (!realpath(dir, canon) || stat(canon, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return err_set(err, SS_ERR_IO, NULL, 0, "output folder '%s' %s", dir ? dir : "(null)",
                       "does not exist or is not a folder");
    ss_outset *s = ss_alloc(sizeof *s);
    if (!s)
        return nomem(err);
    s->lock_fd = -1;
    s->lock_slot = -1;
    s->dir = arena_strdup(&s->arena, dir);
    s->dir_canon = arena_strdup(&s->arena, canon);
    size_t n = strlen(dir) + sizeof OUTSET_LOCK + 2;
    char *lock_path = arena_alloc(&s->arena, n);
    if (!s->dir || !s->dir_canon || !lock_path) {
        ss_outset_destroy(&s);
        return nomem(err);
    }
    snprintf(lock_path, n, "%s/%s", dir, OUTSET_LOCK);
    /* the lock is held as long as the set lives and goes with the process however it ends, so
     * a killed run leaves no stale lock; the file is removed when the set is destroyed, and a
     * lock taken on a file that was removed meanwhile (its run just ended) is taken again on
     * the new one -- the usual protocol of lock files that are unlinked. On a file system
     * without locks the set goes on without (the manifest still says which files belong
     * together). */
    for (int attempt = 0;; attempt++) {
        s->lock_fd = open(lock_path, O_RDWR | O_CREAT | O_CLOEXEC, 0666);
        if (s->lock_fd < 0) {
            int e = errno;
            ss_outset_destroy(&s);
            return err_set(err, SS_ERR_IO, NULL, 0, "output folder '%s' is not writable: %s",
                           dir, strerror(e));
        }
        if (flock(s->lock_fd, LOCK_EX | LOCK_NB) != 0) {
            if (errno == EWOULDBLOCK) {
                ss_outset_destroy(&s);
                return err_set(err, SS_ERR_INPUT, NULL, 0,
                               "output folder '%s' is being written by another stagesim run "
                               "(its lock %s is held); give each run its own folder",
                               dir, OUTSET_LOCK);
            }
            break; /* no locks here */
        }
        struct stat held, now;
        if (fstat(s->lock_fd, &held) == 0 && stat(lock_path, &now) == 0 &&
            held.st_ino == now.st_ino && held.st_dev == now.st_dev) {
            s->lock_path = lock_path;
            /* a signal that ends the run removes it too (ss_output_remove_temporaries) */
            s->lock_slot = output_temp_register(lock_path);
            break;
        }
        close(s->lock_fd);
        s->lock_fd = -1;
        if (attempt == 100) {
            ss_outset_destroy(&s);
            return err_set(err, SS_ERR_IO, NULL, 0, "output folder '%s': cannot take its lock",
                           dir);
        }
    }
    *out = s;
    return SS_OK;
}

/* Splits path into folder (as written; "." when none) and base name. */
static int split_path(const char *path, char *folder, size_t folder_len, const char **base)
{
    const char *slash = strrchr(path, '/');
    *base = slash ? slash + 1 : path;
    if (!slash)
        return snprintf(folder, folder_len, ".") < (int)folder_len ? 0 : -1;
    if (slash == path)
        return snprintf(folder, folder_len, "/") < (int)folder_len ? 0 : -1;
    int len = (int)(slash - path);
    return snprintf(folder, folder_len, "%.*s", len, path) < (int)folder_len ? 0 : -1;
}

ss_status ss_outset_add(ss_outset *s, const char *path, const char *what, const char **out_staged,
                        ss_error *err)
{
    char folder[PATH_MAX], canon_dir[PATH_MAX];
    const char *base;
    if (!path || !path[0] || split_path(path, folder, sizeof folder, &base) != 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "%s: no file name given", what);
    if (!base[0] || strcmp(base, ".") == 0 || strcmp(base, "..") == 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "%s '%s' names a folder, not a file", what,
                       path);
    struct stat sb;
    if (!realpath(folder, canon_dir) || stat(canon_dir, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return err_set(err, SS_ERR_IO, NULL, 0, "%s '%s': folder '%s' does not exist", what, path,
                       folder);
    if (access(canon_dir, W_OK | X_OK) != 0)
        return err_set(err, SS_ERR_IO, NULL, 0, "%s '%s': folder '%s' is not writable", what,
                       path, folder);
    if (stat(path, &sb) == 0 && S_ISDIR(sb.st_mode))
        return err_set(err, SS_ERR_INPUT, NULL, 0, "%s '%s' is a folder, not a file", what, path);
    size_t cn = strlen(canon_dir) + strlen(base) + 2;
    char *canon = arena_alloc(&s->arena, cn);
    if (!canon)
        return nomem(err);
    snprintf(canon, cn, "%s/%s", strcmp(canon_dir, "/") == 0 ? "" : canon_dir, base);
    for (int i = 0; i < s->n_files; i++)
        if (strcmp(s->files[i].canon, canon) == 0)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "%s '%s' is the same file as %s '%s': one run cannot write two "
                           "outputs to one file",
                           what, path, s->files[i].what, s->files[i].path);
    /* the run's own manifest and lock are not the user's to name */
    int in_dir = s->dir_canon && strcmp(canon_dir, s->dir_canon) == 0;
    if (in_dir && (strcmp(base, OUTSET_MANIFEST) == 0 || strcmp(base, OUTSET_LOCK) == 0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "%s '%s' would replace the run's own %s; choose another name", what, path,
                       base);
    if (s->n_files == s->cap_files) {
        int ncap = s->cap_files ? 2 * s->cap_files : 16;
        outset_file *nf = ss_realloc(s->files, (size_t)ncap * sizeof *nf);
        if (!nf)
            return nomem(err);
        s->files = nf;
        s->cap_files = ncap;
    }
    size_t sn = strlen(folder) + strlen(base) + 48;
    outset_file *f = &s->files[s->n_files];
    memset(f, 0, sizeof *f);
    f->path = arena_strdup(&s->arena, path);
    f->what = arena_strdup(&s->arena, what);
    f->canon = canon;
    f->staged = arena_alloc(&s->arena, sn);
    if (!f->path || !f->what || !f->staged)
        return nomem(err);
    f->in_dir_name = in_dir ? f->path + (strlen(f->path) - strlen(base)) : NULL;
    snprintf(f->staged, sn, "%s/.%s.stage.%ld", folder, base, (long)getpid());
    f->slot = output_temp_register(f->staged);
    if (f->slot < 0)
        return err_set(err, SS_ERR_LIMIT, NULL, 0, "more than %d output files in one run",
                       OUTPUT_MAX_TEMPORARIES);
    s->n_files++;
    *out_staged = f->staged;
    return SS_OK;
}

ss_status ss_outset_note(ss_outset *s, const char *key, const char *value, ss_error *err)
{
    if (s->n_notes == s->cap_notes) {
        int ncap = s->cap_notes ? 2 * s->cap_notes : 32;
        kv_pair *nn = ss_realloc(s->notes, (size_t)ncap * sizeof *nn);
        if (!nn)
            return nomem(err);
        s->notes = nn;
        s->cap_notes = ncap;
    }
    kv_pair *kv = &s->notes[s->n_notes];
    kv->key = arena_strdup(&s->arena, key);
    kv->value = arena_strdup(&s->arena, value ? value : "");
    if (!kv->key || !kv->value)
        return nomem(err);
    s->n_notes++;
    return SS_OK;
}

ss_status ss_outset_note_circuit(ss_outset *set, const ss_circuit *ckt, ss_error *err)
{
    const char *netlist = ss_circuit_input(ckt, 0, NULL);
    ss_status st = netlist ? ss_outset_note(set, "netlist", netlist, err) : SS_OK;
    for (int i = 0; st == SS_OK && ss_circuit_input(ckt, i, NULL); i++) {
        const char *sha, *path = ss_circuit_input(ckt, i, &sha);
        char key[PATH_MAX + 16];
        snprintf(key, sizeof key, "input_sha256(%s)", path);
        st = ss_outset_note(set, key, sha, err);
    }
    return st;
}

/* The file names an earlier run's manifest in the folder listed (inside the folder only). */
static void remove_stale(ss_outset *s, const kv_pair *old, int n_old)
{
    size_t kl = strlen(OUTSET_FILE_KEY);
    for (int i = 0; i < n_old; i++) {
        const char *k = old[i].key;
        size_t len = strlen(k);
        if (strncmp(k, OUTSET_FILE_KEY, kl) != 0 || len < kl + 2 || k[len - 1] != ')')
            continue;
        char name[NAME_MAX + 1];
        if (len - kl - 1 > NAME_MAX)
            continue;
        memcpy(name, k + kl, len - kl - 1);
        name[len - kl - 1] = '\0';
        /* a plain name inside the folder, never a path elsewhere, never our own files */
        if (!name[0] || strchr(name, '/') || strcmp(name, ".") == 0 || strcmp(name, "..") == 0 ||
            strcmp(name, OUTSET_MANIFEST) == 0 || strcmp(name, OUTSET_LOCK) == 0)
            continue;
        int ours = 0;
        for (int j = 0; j < s->n_files && !ours; j++)
            ours = s->files[j].in_dir_name && s->files[j].done &&
                   strcmp(s->files[j].in_dir_name, name) == 0;
        if (ours)
            continue;
        char path[PATH_MAX];
        if (snprintf(path, sizeof path, "%s/%s", s->dir, name) < (int)sizeof path)
            unlink(path);
    }
}

/* Renames every written file of the set into place. */
static ss_status rename_all(ss_outset *s, ss_error *err)
{
    for (int i = 0; i < s->n_files; i++) {
        outset_file *f = &s->files[i];
        unsigned char d[32];
        unsigned long long size;
        if (!output_temp_digest(f->slot, d, &size))
            continue; /* reserved, never written: not part of the set */
        if (rename(f->staged, f->path) != 0)
            return err_set(err, SS_ERR_IO, f->path, 0, "cannot write: %s", strerror(errno));
        f->done = 1;
    }
    return SS_OK;
}

ss_status ss_outset_commit(ss_outset *s, ss_error *err)
{
    if (!s->dir)
        return rename_all(s, err);
    char man_path[PATH_MAX];
    if (snprintf(man_path, sizeof man_path, "%s/%s", s->dir, OUTSET_MANIFEST) >=
        (int)sizeof man_path)
        return err_set(err, SS_ERR_LIMIT, NULL, 0, "output folder name too long");
    /* the old manifest goes first: from here until the new one is written, no manifest claims
     * a set that is being replaced */
    kv_pair *old = NULL;
    int n_old = 0;
    ss_error ignore = {0};
    if (manifest_read(man_path, &old, &n_old, NULL, &ignore) != SS_OK) {
        old = NULL;
        n_old = 0;
    }
    if (unlink(man_path) != 0 && errno != ENOENT) {
        int e = errno;
        manifest_free(old, n_old);
        return err_set(err, SS_ERR_IO, man_path, 0, "cannot remove the old manifest: %s",
                       strerror(e));
    }
    csv_out o;
    ss_status st = rename_all(s, err);
    if (st == SS_OK)
        remove_stale(s, old, n_old);
    manifest_free(old, n_old);
    if (st == SS_OK)
        st = csv_open(&o, man_path, err);
    if (st != SS_OK)
        return st;
    csv_field(&o, "key");
    csv_field_after(&o, "value");
    csv_char(&o, '\n');
    for (int i = 0; i < s->n_notes; i++) {
        csv_field(&o, s->notes[i].key);
        csv_field_after(&o, s->notes[i].value);
        csv_char(&o, '\n');
    }
    for (int i = 0; i < s->n_files; i++) {
        const outset_file *f = &s->files[i];
        unsigned char d[32];
        unsigned long long size;
        if (!f->done || !output_temp_digest(f->slot, d, &size))
            continue;
        char key[PATH_MAX + 32], hex[65];
        snprintf(key, sizeof key, "%s%s)", OUTSET_FILE_KEY, f->in_dir_name ? f->in_dir_name : f->path);
        sha256_hex(d, hex);
        csv_field(&o, key);
        csv_field_after(&o, hex);
        csv_char(&o, '\n');
    }
    return csv_commit(&o, err);
}

void ss_outset_destroy(ss_outset **ps)
{
    if (!ps || !*ps)
        return;
    ss_outset *s = *ps;
    for (int i = 0; i < s->n_files; i++) {
        if (!s->files[i].done)
            unlink(s->files[i].staged); /* an uncommitted set leaves nothing behind */
        output_temp_release(s->files[i].slot);
    }
    if (s->lock_path) {
        output_temp_release(s->lock_slot);
        unlink(s->lock_path); /* removed while still held, then released */
    }
    if (s->lock_fd >= 0)
        close(s->lock_fd);
    ss_free(s->files);
    ss_free(s->notes);
    arena_clear(&s->arena);
    ss_free(s);
    *ps = NULL;
}

int outset_written(const ss_outset *s, int i, const char **name, const char **staged)
{
    if (!s || i < 0 || i >= s->n_files)
        return -1;
    const outset_file *f = &s->files[i];
    unsigned char d[32];
    unsigned long long size;
    *name = f->in_dir_name ? f->in_dir_name : f->path;
    *staged = output_temp_digest(f->slot, d, &size) ? f->staged : NULL;
    return 0;
}

/* ---- reading a manifest ------------------------------------------------------------------ */

void manifest_free(kv_pair *kv, int n)
{
    for (int i = 0; kv && i < n; i++) {
        ss_free(kv[i].key);
        ss_free(kv[i].value);
    }
    ss_free(kv);
}

/* One field of a CSV line from *p (RFC 4180 quotes); NULL on a malformed field. */
static char *read_field(const char **p)
{
    const char *s = *p;
    ss_strbuf b = {0};
    if (*s == '"') {
        s++;
        for (;;) {
            if (!*s)
                goto bad;
            if (*s == '"' && s[1] == '"') {
                strbuf_append(&b, "\"", 1);
                s += 2;
            } else if (*s == '"') {
                s++;
                break;
            } else {
                strbuf_append(&b, s++, 1);
            }
        }
    } else {
        const char *e = s + strcspn(s, ",\n");
        strbuf_append(&b, s, (size_t)(e - s));
        s = e;
    }
    if (b.failed)
        goto bad;
    char *out = b.data ? b.data : ss_strdup("");
    if (!out)
        goto bad;
    *p = s;
    return out;
bad:
    strbuf_clear(&b);
    return NULL;
}

ss_status manifest_read(const char *path, kv_pair **out, int *n_out, const char *who, ss_error *err)
{
    ss_strbuf b = {0};
    int sys_errno = 0;
    int rc = strbuf_read_file(&b, path, OUTSET_MANIFEST_MAX_BYTES, &sys_errno);
    if (rc != SS_READ_OK) {
        strbuf_clear(&b);
        if (rc == SS_READ_NOMEM)
            return nomem(err);
        if (rc == SS_READ_TOO_LARGE)
            return err_set(err, SS_ERR_INPUT, who ? who : path, 0,
                           "the manifest '%s' is larger than %d MiB: not a stagesim manifest",
                           path, OUTSET_MANIFEST_MAX_BYTES >> 20);
        return err_set(err, rc == SS_READ_OPEN ? SS_ERR_IO : SS_ERR_INPUT, who ? who : path, 0,
                       "cannot read the manifest '%s': %s", path,
                       strbuf_read_error_text(rc, sys_errno));
    }
    kv_pair *kv = NULL;
    int n = 0, cap = 0, line = 0;
    ss_status st = SS_OK;
    const char *p = b.data ? b.data : "";
    while (*p && st == SS_OK) {
        line++;
        char *k = read_field(&p);
        char *v = k && *p == ',' ? (p++, read_field(&p)) : NULL;
        if (!k || !v || *p != '\n') {
            ss_free(k);
            ss_free(v);
            st = err_set(err, SS_ERR_INPUT, path, line,
                         "not a stagesim manifest line (key,value ending in a line feed)");
            break;
        }
        p++;
        if (line == 1) { /* the header */
            int ok = strcmp(k, "key") == 0 && strcmp(v, "value") == 0;
            ss_free(k);
            ss_free(v);
            if (!ok)
                st = err_set(err, SS_ERR_INPUT, path, 1, "not a stagesim manifest (header)");
            continue;
        }
        if (n == cap) {
            cap = cap ? 2 * cap : 32;
            kv_pair *nk = ss_realloc(kv, (size_t)cap * sizeof *nk);
            if (!nk) {
                ss_free(k);
                ss_free(v);
                st = nomem(err);
                break;
            }
            kv = nk;
        }
        kv[n].key = k;
        kv[n].value = v;
        n++;
    }
    strbuf_clear(&b);
    if (st == SS_OK && line == 0)
        st = err_set(err, SS_ERR_INPUT, path, 0, "empty manifest");
    if (st != SS_OK) {
        manifest_free(kv, n);
        return st;
    }
    *out = kv;
    *n_out = n;
    return SS_OK;
}

const char *manifest_get(const kv_pair *kv, int n, const char *key)
{
    for (int i = 0; i < n; i++)
        if (strcmp(kv[i].key, key) == 0)
            return kv[i].value;
    return NULL;
}
