/* The stagesim command's shared helpers: option values, errors, the output folder and its
 * output set, and the circuit with the command line's stage options. The commands are elsewhere. */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

static int exit_code_for(ss_status st)
{
    switch (st) {
    case SS_OK: return EXIT_OK;
    case SS_ERR_NO_CONVERGENCE: return EXIT_NO_CONVERGENCE;
    default: return EXIT_BAD_INPUT;
    }
}

int fail(const ss_error *err)
{
    char msg[1400];
    ss_error_format(err, msg, sizeof msg);
    fprintf(stderr, "%s\n", msg);
    return exit_code_for(err->code);
}

/* ---- option values ------------------------------------------------------------------------ */

/* A whole number written in decimal digits only (no sign, no suffix), at most max. */
int parse_count(const char *s, unsigned long long max, unsigned long long *out)
{
    if (!*s)
        return -1;
    for (const char *c = s; *c; c++)
        if (*c < '0' || *c > '9')
            return -1;
    errno = 0;
    char *end;
    unsigned long long v = strtoull(s, &end, 10);
    if (errno || *end || v > max)
        return -1;
    *out = v;
    return 0;
}

/* A real option value (ss_value_parse: SI suffixes, nothing after) within lo .. hi, each end
 * open or closed; on failure the message names the option, what it needs and the text. */
int parse_real(const char *opt, const char *text, double lo, int lo_open, double hi,
               int hi_open, const char *needs, double *out)
{
    ss_error err = {0};
    double v;
    if (ss_value_parse(text, &v, &err) != SS_OK)
        return usage_errorf("%s needs %s: %s", opt, needs, err.message);
    if (v < lo || (lo_open && v == lo) || v > hi || (hi_open && v == hi))
        return usage_errorf("%s needs %s, got '%s'", opt, needs, text);
    *out = v;
    return EXIT_OK;
}

/* ---- the output folder -------------------------------------------------------------------- */

/* mkdir -p: creates DIR and any missing parents. */
static int make_dirs(const char *dir)
{
    char path[4096];
    snprintf(path, sizeof path, "%s", dir);
    for (char *p = path + 1; *p; p++) {
        if (*p != '/')
            continue;
        *p = '\0';
        if (mkdir(path, 0777) != 0 && errno != EEXIST)
            return -1;
        *p = '/';
    }
    return mkdir(path, 0777) != 0 && errno != EEXIST ? -1 : 0;
}

/* Makes sure DIR exists and is writable before any computation. */
static int prepare_out_dir(const char *dir)
{
    struct stat sb;
    if (stat(dir, &sb) != 0) {
        if (errno != ENOENT || make_dirs(dir) != 0) {
            fprintf(stderr, "stagesim: output folder '%s': %s\n", dir, strerror(errno));
            return -1;
        }
    } else if (!S_ISDIR(sb.st_mode)) {
        fprintf(stderr, "stagesim: output folder '%s' is not a folder\n", dir);
        return -1;
    }
    if (access(dir, W_OK | X_OK) != 0) {
        fprintf(stderr, "stagesim: output folder '%s' is not writable: %s\n", dir,
                strerror(errno));
        return -1;
    }
    return 0;
}

int write_table(const ss_table *t, const char *path, ss_error *err)
{
    return ss_table_write_csv(t, path, err) == SS_OK ? 0 : -1;
}

/* ---- output sets: the files of one run appear together (docs/cli.md, "Output sets") ------ */

/* Opens the output set in the run's folder (created if missing) and notes what the run is. */
int out_open(const cli_args *a, ss_outset **set)
{
    if (prepare_out_dir(a->out_dir) != 0)
        return EXIT_BAD_INPUT;
    ss_error err = {0};
    if (ss_outset_open(a->out_dir, set, &err) != SS_OK)
        return fail(&err);
    char tool[64];
    snprintf(tool, sizeof tool, "stagesim %s", ss_version());
    if (ss_outset_note(*set, "tool", tool, &err) != SS_OK ||
        ss_outset_note(*set, "command", a->cmd, &err) != SS_OK ||
        ss_outset_note(*set, "arguments", a->cmdline, &err) != SS_OK) {
        ss_outset_destroy(set);
        return fail(&err);
    }
    return EXIT_OK;
}

/* Reserves the files names[0 .. n-1] of the run's folder in the set, before any work: where
 * each is to be written goes into staged[]. */
int out_reserve(ss_outset *set, const char *dir, const char *const *names, int n,
                const char **staged)
{
    for (int i = 0; i < n; i++) {
        char path[4096];
        snprintf(path, sizeof path, "%s/%s", dir, names[i]);
        ss_error err = {0};
        if (ss_outset_add(set, path, names[i], &staged[i], &err) != SS_OK)
            return fail(&err);
    }
    return EXIT_OK;
}

/* out_open, then out_reserve of names[0 .. n-1]: the set of a command's files, reserved
 * before any work (*set NULL on failure). */
int out_start(const cli_args *a, const char *const *names, int n, const char **staged,
              ss_outset **set)
{
    int rc = out_open(a, set);
    if (rc == EXIT_OK)
        rc = out_reserve(*set, a->out_dir, names, n, staged);
    if (rc != EXIT_OK)
        ss_outset_destroy(set);
    return rc;
}

/* Commits the set (the run succeeded); rc passes through unless the commit fails. */
int out_commit(ss_outset *set, int rc)
{
    ss_error err = {0};
    if (ss_outset_commit(set, &err) != SS_OK)
        return fail(&err);
    return rc;
}

int html_start(const cli_args *a, ss_outset *set, ss_html **h, const char **staged)
{
    *h = NULL;
    if (!a->html)
        return EXIT_OK;
    ss_error err = {0};
    if (ss_outset_add(set, a->html, "--html", staged, &err) != SS_OK)
        return fail(&err);
    size_t n = strlen(a->cmdline ? a->cmdline : "") + 16;
    char *sub = malloc(n);
    if (!sub) {
        fprintf(stderr, "stagesim: out of memory\n");
        return EXIT_BAD_INPUT;
    }
    snprintf(sub, n, "stagesim %s", a->cmdline ? a->cmdline : a->cmd);
    ss_status st = ss_html_create(NULL, sub, h, &err);
    free(sub);
    return st == SS_OK ? EXIT_OK : fail(&err);
}

int html_finish(ss_html *h, const ss_outset *set, const char *staged, ss_error *err)
{
    if (!h)
        return 0;
    return ss_html_add_outset_plots(h, set, err) == SS_OK && ss_html_write(h, staged, err) == SS_OK
               ? 0
               : -1;
}

void print_figure(double v, const char *name)
{
    char buf[48];
    printf(" %13s", ss_format_figure(buf, sizeof buf, v, name));
}

/* ---- the circuit ------------------------------------------------------------------------- */

/* --nodes a,b --nodes c (or --devices): the lists split at the commas, handed to select. */
static int select_names(ss_solver *sv, const char *opt, const char *what, const char **lists,
                        int n_lists,
                        ss_status (*select)(ss_solver *, const char *const *, int, ss_error *))
{
    size_t total = 0;
    for (int i = 0; i < n_lists; i++)
        total += strlen(lists[i]) + 1;
    char *buf = malloc(total);
    const char **names = calloc(total, sizeof *names);
    if (!buf || !names) {
        free(buf);
        free(names);
        fprintf(stderr, "stagesim: out of memory\n");
        return EXIT_BAD_INPUT;
    }
    int n = 0;
    char *w = buf;
    for (int i = 0; i < n_lists; i++) {
        size_t len = strlen(lists[i]);
        memcpy(w, lists[i], len + 1);
        for (char *tok = strtok(w, ","); tok; tok = strtok(NULL, ","))
            names[n++] = tok;
        w += len + 1;
    }
    ss_error err = {0};
    int rc = EXIT_OK;
    if (n == 0)
        rc = usage_errorf("%s needs %s names separated by commas", opt, what);
    else if (select(sv, names, n, &err) != SS_OK) {
        fprintf(stderr, "stagesim: %s: %s\n", opt, err.message);
        rc = EXIT_BAD_INPUT;
    }
    free(buf);
    free(names);
    return rc;
}

const char **model_search_path(const cli_args *a, int *n)
{
    const char *env = getenv("STAGESIM_MODELS");
    /* the installed folder: <prefix>/<bindir>/stagesim -> <prefix>/<datadir>/stagesim/models,
     * from where this program is, so an installed tree can move */
    char exe[4096], installed[4096 + 64] = "";
    ssize_t len = readlink("/proc/self/exe", exe, sizeof exe - 1);
    if (len > 0) {
        exe[len] = '\0';
        char *slash = strrchr(exe, '/');
        if (slash) {
            *slash = '\0';
            struct stat st;
            snprintf(installed, sizeof installed, "%s/%s", exe, STAGESIM_MODELS_FROM_BIN);
            if (stat(installed, &st) != 0 || !S_ISDIR(st.st_mode))
                installed[0] = '\0';
        }
    }
    size_t text = strlen(installed) + 1 + (env ? strlen(env) + 1 : 0);
    for (int i = 0; i < a->n_models; i++)
        text += strlen(a->models[i]) + 1;
    int cap = a->n_models + 1;
    for (const char *c = env; c && *c; c++)
        cap += *c == ':';
    cap += env ? 1 : 0;
    const char **list = malloc((size_t)cap * sizeof *list + text);
    if (!list)
        return NULL;
    char *w = (char *)(list + cap);
    int k = 0;
    for (int i = 0; i < a->n_models; i++) {
        list[k++] = strcpy(w, a->models[i]);
        w += strlen(w) + 1;
    }
    for (const char *c = env; c && *c;) {
        size_t m = strcspn(c, ":");
        if (m > 0) { /* an empty entry names no folder */
            memcpy(w, c, m);
            w[m] = '\0';
            list[k++] = w;
            w += m + 1;
        }
        c += m + (c[m] == ':');
    }
    if (installed[0])
        list[k++] = strcpy(w, installed);
    *n = k;
    return list;
}

/* --load and the large-signal options act on the stage: without one they would be dropped. */
static int apply_stage_options(ss_solver *sv, const cli_args *a)
{
    const char *ls_opt = a->ls_freq > 0.0      ? "--ls-freq"
                         : a->thd_amp > 0.0    ? "--thd-amp"
                         : a->thd_target > 0.0 ? "--thd-target"
                                               : NULL;
    if (!(a->load_ohm > 0.0) && !ls_opt)
        return EXIT_OK;
    ss_analysis_flags fl;
    ss_solver_analyses(sv, &fl);
    ss_error err = {0};
    if (a->load_ohm > 0.0) {
        if (!fl.stage) {
            fprintf(stderr, "stagesim: --load: the circuit has no stage to load (name one with "
                            ".stage or --in/--out)\n");
            return EXIT_BAD_INPUT;
        }
        if (ss_solver_set_load(sv, a->load_ohm, &err) != SS_OK) {
            fprintf(stderr, "stagesim: --load: %s\n", err.message);
            return EXIT_BAD_INPUT;
        }
    }
    if (ls_opt) {
        if (!fl.stage) {
            fprintf(stderr, "stagesim: %s: the large-signal test needs a stage (name one with "
                            ".stage or --in/--out)\n",
                    ls_opt);
            return EXIT_BAD_INPUT;
        }
        if ((a->ls_freq > 0.0 && ss_solver_set_test_frequency(sv, a->ls_freq, &err) != SS_OK) ||
            (a->thd_amp > 0.0 && ss_solver_set_test_amplitude(sv, a->thd_amp, &err) != SS_OK) ||
            (a->thd_target > 0.0 && ss_solver_set_thd_target(sv, a->thd_target, &err) != SS_OK)) {
            fprintf(stderr, "stagesim: %s: %s\n", ls_opt, err.message);
            return EXIT_BAD_INPUT;
        }
    }
    return EXIT_OK;
}

/* --noise-band and --noise-weight act on the noise analysis: without one they would be
 * dropped. */
static int apply_noise_options(ss_solver *sv, const cli_args *a)
{
    const char *opt = a->noise_lo_hz > 0.0 ? "--noise-band" : a->noise_weight ? "--noise-weight"
                                                                                : NULL;
    if (!opt)
        return EXIT_OK;
    ss_analysis_flags fl;
    ss_solver_analyses(sv, &fl);
    if (!fl.noise) {
        fprintf(stderr, "stagesim: %s: the netlist has no noise analysis (add `.noise v(OUT) "
                        "SRC`)\n",
                opt);
        return EXIT_BAD_INPUT;
    }
    ss_error err = {0};
    if (a->noise_lo_hz > 0.0 &&
        ss_solver_set_noise_band(sv, a->noise_lo_hz, a->noise_hi_hz, 0, &err) != SS_OK) {
        fprintf(stderr, "stagesim: --noise-band: %s\n", err.message);
        return EXIT_BAD_INPUT;
    }
    if (a->noise_weight && ss_solver_set_noise_weight(sv, a->noise_weight, &err) != SS_OK) {
        fprintf(stderr, "stagesim: --noise-weight: %s\n", err.message);
        return EXIT_BAD_INPUT;
    }
    return EXIT_OK;
}

/* Parses the netlist, makes its solver context and applies --in/--out/--load/--nodes/--devices
 * and the large-signal options to it. */
int load_circuit(const cli_args *a, ss_circuit **out_ckt, ss_solver **out_sv)
{
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    ss_solver *sv = NULL;
    int n_dirs = 0;
    const char **dirs = model_search_path(a, &n_dirs);
    if (!dirs) {
        fprintf(stderr, "stagesim: out of memory\n");
        return EXIT_BAD_INPUT;
    }
    ss_status pst = ss_circuit_parse_file_models(a->netlist, a->sets, a->n_sets, dirs, n_dirs,
                                                 &ckt, &err);
    free(dirs);
    if (pst != SS_OK)
        return fail(&err);
    if (ss_solver_create(ckt, &sv, &err) != SS_OK) {
        ss_circuit_destroy(&ckt);
        return fail(&err);
    }
    int rc = EXIT_OK;
    if ((a->in_src || a->out_node) && (!a->in_src || !a->out_node)) {
        fprintf(stderr, "stagesim: --in and --out go together\n");
        rc = EXIT_BAD_INPUT;
    } else if (a->in_src && ss_solver_set_stage(sv, a->in_src, a->out_node, &err) != SS_OK) {
        rc = fail(&err);
    }
    if (rc == EXIT_OK)
        rc = apply_stage_options(sv, a);
    if (rc == EXIT_OK)
        rc = apply_noise_options(sv, a);
    if (rc == EXIT_OK && a->n_nodes > 0)
        rc = select_names(sv, "--nodes", "node", a->nodes, a->n_nodes, ss_solver_select_nodes);
    ss_analysis_flags fl;
    ss_solver_analyses(sv, &fl);
    if (rc == EXIT_OK && a->n_devices > 0 && !fl.dc) {
        fprintf(stderr, "stagesim: --devices: the netlist has no .dc sweep (the elements' "
                        "columns go into dc.csv; op.csv has every element's rows)\n");
        rc = EXIT_BAD_INPUT;
    }
    if (rc == EXIT_OK && a->n_devices > 0)
        rc = select_names(sv, "--devices", "element", a->devices, a->n_devices,
                          ss_solver_select_devices);
    if (rc != EXIT_OK) {
        ss_solver_destroy(&sv);
        ss_circuit_destroy(&ckt);
        return rc;
    }
    *out_ckt = ckt;
    *out_sv = sv;
    return EXIT_OK;
}
