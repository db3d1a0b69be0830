/* Study runner: the study object and its setup (swept values, tolerances, trials, threads,
 * shard, limits), and the run: grids of swept values and Monte Carlo trials over tolerances, one
 * parse per study and one solver context per thread, each point's values set by name on it,
 * with results placed by point index (so the output never depends on the thread count). Statistics are summary.c's, sensitivities and
 * corners sensitivity.c's, preferred values snap.c's, merging shards shards.c's. */
#define _POSIX_C_SOURCE 200809L
#include <ctype.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "devices/device.h"
#include "netlist/netlist.h"
#include "output/output.h"
#include "study/study.h"

#define STUDY_MAX_THREADS 256

static char *lower_dup(ss_arena *a, const char *s, size_t n)
{
    char *d = arena_strndup(a, s, n);
    if (d)
        for (char *c = d; *c; c++)
            *c = (char)tolower((unsigned char)*c);
    return d;
}

/* ---- random numbers: splitmix64 seeding xoshiro256** (Blackman & Vigna, 2018) ----------- */

typedef struct rng {
    uint64_t s[4];
} rng;

static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

static void rng_seed(rng *r, uint64_t seed, uint64_t stream)
{
    uint64_t x = seed ^ (stream * 0xd1b54a32d192ed03ull);
    for (int i = 0; i < 4; i++)
        r->s[i] = splitmix64(&x);
}

static uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

static uint64_t rng_next(rng *r)
{
    uint64_t *s = r->s;
    uint64_t result = rotl(s[1] * 5, 7) * 9;
    uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

/* uniform in (0, 1): 53 random bits, never 0 */
static double rng_uniform(rng *r) { return ((double)(rng_next(r) >> 11) + 0.5) * 0x1.0p-53; }

/* standard normal by the Box-Muller transform (two uniforms per draw, no state kept) */
static double rng_gauss(rng *r)
{
    double u1 = rng_uniform(r), u2 = rng_uniform(r);
    return sqrt(-2.0 * log(u1)) * cos(2.0 * SS_PI * u2);
}

/* ---- configuration ------------------------------------------------------------------------ */

static ss_status add_tolerance(ss_study *s, const char *spec, int netlist_rules, ss_error *err);

ss_status ss_study_create(const char *netlist_path, const ss_override *sets, int n_sets,
                          ss_study **out, ss_error *err)
{
    return ss_study_create_models(netlist_path, sets, n_sets, NULL, 0, out, err);
}

ss_status ss_study_create_models(const char *netlist_path, const ss_override *sets, int n_sets,
                                 const char *const *model_dirs, int n_model_dirs, ss_study **out,
                                 ss_error *err)
{
    ss_study *s = ss_alloc(sizeof *s);
    if (!s)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    s->netlist = arena_strdup(&s->arena, netlist_path);
    s->sets = arena_alloc(&s->arena, (size_t)(n_sets + 1) * sizeof *s->sets);
    if (!s->netlist || !s->sets) {
        ss_study_destroy(&s);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    for (int i = 0; i < n_sets; i++) {
        s->sets[i].name = arena_strdup(&s->arena, sets[i].name);
        s->sets[i].value = arena_strdup(&s->arena, sets[i].value);
        if (!s->sets[i].name || !s->sets[i].value) {
            ss_study_destroy(&s);
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        }
    }
    s->n_sets = n_sets;
    s->shard_k = s->shard_n = 1;
    ss_status st = ss_circuit_parse_file_models(netlist_path, sets, n_sets, model_dirs,
                                                n_model_dirs, &s->nominal, err);
    if (st == SS_OK)
        st = ss_solver_create(s->nominal, &s->nominal_sv, err);
    if (st != SS_OK) {
        ss_study_destroy(&s);
        return st;
    }
    /* the netlist's own .expect lines, then its .tolerance lines */
    if (ss_limits_create(&s->own_limits, err) != SS_OK ||
        ss_limits_add_circuit(s->own_limits, s->nominal, err) != SS_OK) {
        ss_study_destroy(&s);
        return err->code;
    }
    s->limits = s->own_limits;
    for (int i = 0; i < s->nominal->n_study_lines; i++) {
        const struct study_line *sl = &s->nominal->study_lines[i];
        if (!sl->is_tolerance)
            continue;
        /* `.tolerance NAME SPEC [gauss]` -> "NAME=SPEC[:gauss]" */
        char spec[600];
        const char *t = sl->text;
        size_t n = strcspn(t, " ");
        const char *rest = t + n;
        while (*rest == ' ')
            rest++;
        if (*rest == '=' || !*rest) {
            /* `.tolerance R2=5%`: the --tol spelling, which the netlist line does not take */
            err_set(err, SS_ERR_INPUT, sl->file, sl->line,
                    ".tolerance %.*s: write the name and the spread apart, `.tolerance NAME 5%%` "
                    "or `.tolerance NAME LO .. HI` (NAME=SPEC is --tol's form)",
                    (int)n, t);
            ss_study_destroy(&s);
            return SS_ERR_INPUT;
        }
        char body[512];
        snprintf(body, sizeof body, "%s", rest);
        /* tokens were joined with spaces: "5 %" -> "5%", "100 .. 300" -> "100..300" */
        char packed[512];
        size_t k = 0;
        int gauss = 0;
        char *g = strstr(body, "gauss");
        if (g) {
            gauss = 1;
            *g = '\0';
        }
        for (char *c = body; *c && k + 1 < sizeof packed; c++)
            if (*c != ' ' && *c != ':')
                packed[k++] = *c;
        packed[k] = '\0';
        snprintf(spec, sizeof spec, "%.*s=%s%s", (int)n, t, packed, gauss ? ":gauss" : "");
        ss_error e2 = {0};
        if (add_tolerance(s, spec, 1, &e2) != SS_OK) {
            err_set(err, e2.code, sl->file, sl->line, ".tolerance: %s", e2.message);
            ss_study_destroy(&s);
            return SS_ERR_INPUT;
        }
    }
    *out = s;
    return SS_OK;
}

void ss_study_destroy(ss_study **ps)
{
    if (!ps || !*ps)
        return;
    ss_study *s = *ps;
    for (int i = 0; i < s->n_dims; i++)
        ss_free(s->dims[i].values);
    ss_free(s->tols);
    ss_limits_destroy(&s->own_limits);
    ss_solver_destroy(&s->nominal_sv);
    ss_circuit_destroy(&s->nominal);
    arena_clear(&s->arena);
    ss_free(s);
    *ps = NULL;
}

/* Names the stage on the nominal context (once; every later use of it has it) and keeps the
 * names for the per-thread contexts. */
ss_status ss_study_set_stage(ss_study *s, const char *in_source, const char *out_node,
                             ss_error *err)
{
    ss_status st = ss_solver_set_stage(s->nominal_sv, in_source, out_node, err);
    if (st != SS_OK)
        return st;
    s->stage_in = arena_strdup(&s->arena, in_source);
    s->stage_out = arena_strdup(&s->arena, out_node);
    return s->stage_in && s->stage_out ? SS_OK
                                       : err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
}

/* The noise band and weighting: checked on the nominal context, kept for the others. A study
 * cannot name a noise analysis of its own: without .noise they would be dropped. */
static ss_status study_needs_noise(const ss_study *s, const char *what, ss_error *err)
{
    return s->nominal_sv->noise.want
               ? SS_OK
               : err_set(err, SS_ERR_INPUT, s->nominal->file, 0,
                         "noise %s: the netlist has no noise analysis (add `.noise v(OUT) SRC`)",
                         what);
}

ss_status ss_study_set_noise_band(ss_study *s, double lo_hz, double hi_hz, int per_decade,
                                  ss_error *err)
{
    ss_status st = study_needs_noise(s, "band", err);
    if (st != SS_OK)
        return st;
    st = ss_solver_set_noise_band(s->nominal_sv, lo_hz, hi_hz, per_decade, err);
    if (st != SS_OK)
        return st;
    s->noise_band_set = 1;
    s->noise_lo_hz = lo_hz;
    s->noise_hi_hz = hi_hz;
    s->noise_per_decade = per_decade;
    return SS_OK;
}

ss_status ss_study_set_noise_weight(ss_study *s, const char *weight, ss_error *err)
{
    ss_status st = study_needs_noise(s, "weighting", err);
    if (st != SS_OK)
        return st;
    st = ss_solver_set_noise_weight(s->nominal_sv, weight, err);
    if (st != SS_OK)
        return st;
    s->noise_weight = arena_strdup(&s->arena, weight);
    s->noise_weight_set = s->noise_weight != NULL;
    return s->noise_weight ? SS_OK : err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
}

/* Checks NAME against the nominal circuit; temp is always known. */
static ss_status check_name(ss_study *s, const char *name, double *nominal, ss_error *err)
{
    if (strcmp(name, "temp") == 0) {
        *nominal = s->nominal->temp_c;
        return SS_OK;
    }
    ss_error e2 = {0};
    if (ss_circuit_get_value(s->nominal, name, nominal, &e2) != SS_OK)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "%s", e2.message);
    /* a value an analysis setting, option or waveform is written in terms of cannot move
     * point by point: refused here, once, rather than failing every point */
    ss_solver *sv = s->nominal_sv;
    ss_solver_reset_values(sv);
    /* (a card's absent parameter can be infinite: IKF, VAF, RBM, IRB ...) */
    double probe = *nominal != 0.0 && isfinite(*nominal) ? *nominal * 1.5 : 1.0;
    ss_status st = ss_solver_set_value(sv, name, probe, &e2);
    if (st == SS_OK && solver_sync_values(sv, &e2) != SS_OK && sv->fixed_conflict)
        st = err_set(err, SS_ERR_INPUT, e2.file, e2.line, "%s: %s", name, e2.message);
    else if (st != SS_OK)
        st = err_set(err, SS_ERR_INPUT, NULL, 0, "%s", e2.message);
    ss_solver_reset_values(sv);
    return st;
}

/* A number of a .tolerance line: a netlist value (unit letters allowed, `1uF`). */
static int parse_netlist_number(const char *t, double *out)
{
    char buf[128];
    size_t n = strlen(t);
    if (n == 0 || n >= sizeof buf)
        return -1;
    memcpy(buf, t, n + 1);
    for (char *c = buf; *c; c++)
        *c = (char)tolower((unsigned char)*c);
    return value_parse(buf, out);
}

/* A number of a --vary or --tol spec: ss_value_parse's form (an SI suffix, nothing else), or
 * a netlist value when the spec comes from a .tolerance line. */
static int spec_number(const char *t, int netlist_rules, double *out)
{
    if (netlist_rules)
        return parse_netlist_number(t, out);
    ss_error e2 = {0};
    return ss_value_parse(t, out, &e2) == SS_OK ? 0 : -1;
}

/* Splits s in place at every sep, empty fields kept; returns the field count, or max + 1 when
 * there are more than max. */
static int split_fields(char *s, char sep, char **f, int max)
{
    int n = 0;
    for (;;) {
        if (n == max)
            return max + 1;
        f[n++] = s;
        char *c = strchr(s, sep);
        if (!c)
            return n;
        *c = '\0';
        s = c + 1;
    }
}

/* Starts s->dims[s->n_dims] for the --vary spec whose '=' is eq: its name, lower case, which
 * must be new, not --set as well, and a value of the circuit (or temp). */
static ss_status vary_start(ss_study *s, const char *spec, const char *eq, vary_dim **out,
                            ss_error *err)
{
    if (!eq || eq == spec)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--vary %s: expected NAME=lin:START:STOP:N, NAME=log:START:STOP:N or "
                       "NAME=list:V1,V2,...",
                       spec);
    if (s->n_dims >= STUDY_MAX_DIMS)
        return err_set(err, SS_ERR_LIMIT, NULL, 0, "--vary: more than %d swept names",
                       STUDY_MAX_DIMS);
    vary_dim *d = &s->dims[s->n_dims];
    d->name = lower_dup(&s->arena, spec, (size_t)(eq - spec));
    if (!d->name)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int i = 0; i < s->n_dims; i++)
        if (strcmp(s->dims[i].name, d->name) == 0)
            return err_set(err, SS_ERR_INPUT, NULL, 0, "--vary %s: swept twice", d->name);
    /* a --set of the same name would be replaced by the swept value at every point */
    for (int i = 0; i < s->n_sets; i++)
        if (strcasecmp_ascii_eq(s->sets[i].name, d->name))
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "--vary %s and --set %s name the same value: the swept value would "
                           "replace the --set one at every point; give one of them",
                           d->name, s->sets[i].name);
    double nominal;
    ss_error name_err = {0};
    ss_status st = check_name(s, d->name, &nominal, &name_err);
    if (st != SS_OK)
        return err_set(err, st, NULL, 0, "--vary %s: %s", d->name, name_err.message);
    *out = d;
    return SS_OK;
}

/* d's values from the fields after `lin:` or `log:` (kind), START:STOP:N in rest, split in
 * place; text is the spec after its '=' as given, for the messages. */
static ss_status vary_fill_range(vary_dim *d, const char *kind, char *rest, const char *text,
                                 ss_error *err)
{
    char *f[3];
    double v[3];
    if (split_fields(rest, ':', f, 3) != 3)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--vary %s: expected %s:START:STOP:N, got %s:%s", d->name, kind, kind,
                       text + strlen(kind) + 1);
    for (int k = 0; k < 3; k++) {
        ss_error e2 = {0};
        if (ss_value_parse(f[k], &v[k], &e2) != SS_OK)
            return err_set(err, SS_ERR_INPUT, NULL, 0, "--vary %s: %s %s", d->name,
                           k == 0 ? "START" : k == 1 ? "STOP" : "N", e2.message);
    }
    double n = v[2];
    if (!(n >= 1.0) || n != floor(n) || n > 1e6)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--vary %s: the point count must be a whole number from 1 to 1e6, "
                       "got %g",
                       d->name, n);
    if (kind[1] == 'o' && !(v[0] > 0.0 && v[1] > 0.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--vary %s: a log sweep needs positive START and STOP", d->name);
    d->n = (int)n;
    d->values = ss_alloc((size_t)d->n * sizeof *d->values);
    if (!d->values)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int i = 0; i < d->n; i++) {
        double t = d->n == 1 ? 0.0 : (double)i / (d->n - 1);
        d->values[i] = kind[1] == 'i' ? v[0] + t * (v[1] - v[0])
                                      : exp(log(v[0]) + t * (log(v[1]) - log(v[0])));
    }
    return SS_OK;
}

/* d's values from the items after `list:`, V1,V2,... in rest, split in place. */
static ss_status vary_fill_list(vary_dim *d, char *rest, ss_error *err)
{
    if (!*rest)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "--vary %s: empty list", d->name);
    int cap = 1;
    for (const char *c = rest; *c; c++)
        cap += *c == ',';
    char **f = ss_alloc((size_t)cap * sizeof *f);
    d->values = ss_alloc((size_t)cap * sizeof *d->values);
    if (!f || !d->values) {
        ss_free(f);
        ss_free(d->values);
        d->values = NULL;
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    d->n = split_fields(rest, ',', f, cap);
    ss_status st = SS_OK;
    for (int i = 0; i < d->n && st == SS_OK; i++) {
        ss_error e2 = {0};
        if (!*f[i])
            st = err_set(err, SS_ERR_INPUT, NULL, 0,
                         "--vary %s: list item %d of %d is empty", d->name, i + 1, d->n);
        else if (ss_value_parse(f[i], &d->values[i], &e2) != SS_OK)
            st = err_set(err, SS_ERR_INPUT, NULL, 0, "--vary %s: %s", d->name, e2.message);
    }
    ss_free(f);
    if (st != SS_OK) {
        ss_free(d->values);
        d->values = NULL;
        return st;
    }
    return SS_OK;
}

ss_status ss_study_add_vary(ss_study *s, const char *spec, ss_error *err)
{
    const char *eq = strchr(spec, '=');
    vary_dim *d = NULL;
    ss_status st = vary_start(s, spec, eq, &d, err);
    if (st != SS_OK)
        return st;
    char body[1024];
    if (strlen(eq + 1) >= sizeof body)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "--vary %s: longer than %zu characters",
                       d->name, sizeof body - 1);
    snprintf(body, sizeof body, "%s", eq + 1);
    char *kind = body, *rest = strchr(body, ':');
    if (!rest)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--vary %s: expected lin:, log: or list: after '='", d->name);
    *rest++ = '\0';
    int is_temp = strcmp(d->name, "temp") == 0;
    if (strcmp(kind, "lin") == 0 || strcmp(kind, "log") == 0)
        st = vary_fill_range(d, kind, rest, eq + 1, err);
    else if (strcmp(kind, "list") == 0)
        st = vary_fill_list(d, rest, err);
    else
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--vary %s: unknown kind '%s' (lin, log or list)", d->name, kind);
    if (st != SS_OK)
        return st;
    for (int i = 0; is_temp && i < d->n; i++)
        if (!temp_in_range(d->values[i])) {
            err_set(err, SS_ERR_INPUT, NULL, 0,
                    "--vary temp: %g C is outside -273.15 .. 1000 C", d->values[i]);
            ss_free(d->values);
            d->values = NULL;
            return SS_ERR_INPUT;
        }
    s->n_dims++;
    return SS_OK;
}

/* netlist_rules: the spec comes from a .tolerance line, whose numbers are netlist values. */
static ss_status add_tolerance(ss_study *s, const char *spec, int netlist_rules, ss_error *err)
{
    const char *eq = strchr(spec, '=');
    if (!eq || eq == spec || !eq[1])
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "tolerance '%s': expected NAME=PCT%%, NAME=LO..HI, optionally :gauss",
                       spec);
    char *name = lower_dup(&s->arena, spec, (size_t)(eq - spec));
    if (!name)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    int is_temp = strcmp(name, "temp") == 0;
    double nominal;
    ss_status st = check_name(s, name, &nominal, err);
    if (st != SS_OK)
        return st;
    for (int i = 0; i < s->n_tols; i++)
        if (strcmp(s->tols[i].name, name) == 0)
            return err_set(err, SS_ERR_INPUT, NULL, 0, "tolerance on %s given twice", name);
    char body[256];
    if (strlen(eq + 1) >= sizeof body)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "tolerance on %s: longer than %zu characters",
                       name, sizeof body - 1);
    snprintf(body, sizeof body, "%s", eq + 1);
    tol_spec t = {name, nominal, 0, 0, 0, -1, -1};
    char *colon = strchr(body, ':');
    if (colon) {
        *colon = '\0';
        if (strcmp(colon + 1, "gauss") == 0)
            t.gauss = 1;
        else if (strcmp(colon + 1, "uniform") != 0)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "tolerance on %s: unknown distribution '%s' (uniform or gauss)", name,
                           colon + 1);
    }
    size_t len = strlen(body);
    char *dots = strstr(body, "..");
    /* NOM+-D (or NOM±D): LO..HI = NOM-D .. NOM+D */
    char *pm = strstr(body, "+-");
    char *pm_utf8 = strstr(body, "\xc2\xb1");
    if (!pm)
        pm = pm_utf8;
    if (is_temp && len > 0 && body[len - 1] == '%')
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "tolerance on temp: a percentage of degrees C means nothing; give "
                       "LO..HI or NOM+-D in C (temp=-40..85, temp=25+-10:gauss)");
    if (pm && !dots) {
        *pm = '\0';
        double nom, d;
        if (spec_number(body, netlist_rules, &nom) != 0 ||
            spec_number(pm + 2, netlist_rules, &d) != 0 || !(d >= 0.0))
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "tolerance on %s: expected NOM+-D with D >= 0", name);
        t.lo = nom - d;
        t.hi = nom + d;
    } else if (len > 0 && body[len - 1] == '%') {
        body[len - 1] = '\0';
        double pct;
        if (spec_number(body, netlist_rules, &pct) != 0 || !(pct >= 0.0 && pct < 100.0))
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "tolerance on %s: percentage must be from 0 to below 100", name);
        t.lo = nominal - fabs(nominal) * pct / 100.0;
        t.hi = nominal + fabs(nominal) * pct / 100.0;
    } else if (dots) {
        *dots = '\0';
        if (spec_number(body, netlist_rules, &t.lo) != 0 ||
            spec_number(dots + 2, netlist_rules, &t.hi) != 0 || t.hi < t.lo)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "tolerance on %s: expected LO..HI with LO <= HI", name);
    } else {
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "tolerance on %s: expected PCT%%, LO..HI or NOM+-D, got '%s'", name,
                       body);
    }
    if (is_temp && !(temp_in_range(t.lo) && temp_in_range(t.hi)))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "tolerance on temp: %g .. %g C leaves -273.15 .. 1000 C", t.lo, t.hi);
    if (is_temp)
        t.nominal = 0.5 * (t.lo + t.hi); /* the centre: no card holds a nominal temperature */
    if (s->n_tols == s->cap_tols) {
        int ncap = s->cap_tols ? s->cap_tols * 2 : 8;
        tol_spec *nt = ss_realloc(s->tols, (size_t)ncap * sizeof *nt);
        if (!nt)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        s->tols = nt;
        s->cap_tols = ncap;
    }
    s->tols[s->n_tols++] = t;
    return SS_OK;
}

ss_status ss_study_add_tolerance(ss_study *s, const char *spec, ss_error *err)
{
    return add_tolerance(s, spec, 0, err);
}

ss_status ss_study_add_match(ss_study *s, const char *spec, ss_error *err)
{
    char body[1024];
    const char *eq = strrchr(spec, '=');
    if (!eq || eq == spec || strlen(spec) >= sizeof body)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--match '%s': expected NAME,NAME[,...]=RHO with 0 <= RHO <= 1", spec);
    if (s->n_groups >= STUDY_MAX_GROUPS)
        return err_set(err, SS_ERR_LIMIT, NULL, 0, "--match: more than %d groups",
                       STUDY_MAX_GROUPS);
    ss_error e2 = {0};
    double rho;
    if (ss_value_parse(eq + 1, &rho, &e2) != SS_OK || !(rho >= 0.0 && rho <= 1.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--match %.*s: the correlation must be a number from 0 to 1, got '%s'",
                       (int)(eq - spec), spec, eq + 1);
    snprintf(body, sizeof body, "%.*s", (int)(eq - spec), spec);
    char *f[STUDY_MAX_DIMS * 16];
    int n = split_fields(body, ',', f, (int)(sizeof f / sizeof f[0]));
    if (n < 2 || n > (int)(sizeof f / sizeof f[0]))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "--match %s: name from 2 to %d toleranced values, apart by commas",
                       body, (int)(sizeof f / sizeof f[0]));
    int g = s->n_groups, idx[sizeof f / sizeof f[0]];
    for (int i = 0; i < n; i++) {
        for (char *c = f[i]; *c; c++)
            *c = (char)tolower((unsigned char)*c);
        idx[i] = -1;
        for (int t = 0; t < s->n_tols && idx[i] < 0; t++)
            if (strcmp(s->tols[t].name, f[i]) == 0)
                idx[i] = t;
        if (idx[i] < 0)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "--match: '%s' has no tolerance (give it one with --tol or "
                           ".tolerance first)",
                           f[i]);
        if (s->tols[idx[i]].group >= 0)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "--match: '%s' is matched twice (a tolerance belongs to one group)",
                           f[i]);
        for (int j = 0; j < i; j++)
            if (idx[j] == idx[i])
                return err_set(err, SS_ERR_INPUT, NULL, 0, "--match: '%s' named twice", f[i]);
    }
    for (int i = 0; i < n; i++)
        s->tols[idx[i]].group = g;
    s->groups[g].rho = rho;
    s->groups[g].n = n;
    s->n_groups++;
    return SS_OK;
}

/* (model, parameter) of a tolerance's name: a card's parameter (`qn.bf`, is_inst 0) or an
 * element's own (`q1.bf`, is_inst 1, the element's card); 0 when it is neither. */
static int tol_model_param(const ss_circuit *ckt, const char *name, const model **md, int *pi,
                           int *is_inst)
{
    char low[1024];
    const char *dot = strrchr(name, '.');
    if (!dot || strlen(name) >= sizeof low)
        return 0;
    snprintf(low, sizeof low, "%.*s", (int)(dot - name), name);
    for (int k = 0; k < ckt->n_params; k++)
        if (strcmp(ckt->params[k].name, name) == 0)
            return 0;
    if (circuit_find_elem(ckt, name) >= 0)
        return 0;
    int mi;
    if (strmap_get(&ckt->model_map, low, &mi)) {
        *md = ckt->models[mi];
        *is_inst = 0;
    } else {
        int ei = circuit_find_elem(ckt, low);
        if (ei < 0 || !elem_has_model(&ckt->elem[ei]))
            return 0;
        *md = ckt->elem[ei].mod;
        *is_inst = 1;
    }
    *pi = model_param_index((*md)->ops, dot + 1);
    return *pi >= 0;
}

/* Links each instance tolerance (`q1.bf`) to a tolerance on its card's parameter (`qn.bf`):
 * then the instance spreads around the card's sampled value (a common and an own part). */
static void link_instance_tols(ss_study *s)
{
    for (int t = 0; t < s->n_tols; t++) {
        const model *md, *md2;
        int pi, pi2, inst, inst2;
        s->tols[t].scale_by = -1;
        if (!tol_model_param(s->nominal, s->tols[t].name, &md, &pi, &inst) || !inst)
            continue;
        for (int u = 0; u < s->n_tols; u++)
            if (u != t && tol_model_param(s->nominal, s->tols[u].name, &md2, &pi2, &inst2) &&
                !inst2 && md2 == md && pi2 == pi && s->tols[u].nominal != 0.0)
                s->tols[t].scale_by = u;
    }
}

ss_status ss_study_set_trials(ss_study *s, long trials, unsigned long long seed, ss_error *err)
{
    if (trials < 1 || trials > STUDY_MAX_POINTS)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "the trial count must be from 1 to %ld, got %ld",
                       STUDY_MAX_POINTS, trials);
    if (s->n_tols == 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "a tolerance run needs tolerances: .tolerance lines or --tol NAME=SPEC");
    s->trials = trials;
    s->seed = seed;
    return SS_OK;
}

ss_status ss_study_set_threads(ss_study *s, int n, ss_error *err)
{
    if (n < 1 || n > STUDY_MAX_THREADS)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "threads: %d is not in 1 .. %d", n,
                       STUDY_MAX_THREADS);
    s->threads = n;
    return SS_OK;
}

int ss_cpu_count(void)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    return n < 1 ? 1 : n > STUDY_MAX_THREADS ? STUDY_MAX_THREADS : (int)n;
}

ss_status ss_study_set_shard(ss_study *s, int k, int n, ss_error *err)
{
    if (n < 1 || k < 1 || k > n)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "shard %d/%d: need 1 <= K <= N", k, n);
    s->shard_k = k;
    s->shard_n = n;
    return SS_OK;
}

ss_status ss_study_add_limits(ss_study *s, const ss_limits *l, ss_error *err)
{
    ss_limits *own = s->own_limits;
    /* the study's identity covers the limits' text: they decide which figures are columns */
    char both[2 * 65 + 1];
    snprintf(both, sizeof both, "%s%s", s->limits_sha256, l->sha256);
    ss_sha256_hex(both, strlen(both), s->limits_sha256);
    for (int i = 0; i < l->n; i++) {
        if (own->n == own->cap) {
            int ncap = own->cap ? own->cap * 2 : 16;
            limit *ni = ss_realloc(own->items, (size_t)ncap * sizeof *ni);
            if (!ni)
                return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
            own->items = ni;
            own->cap = ncap;
        }
        own->items[own->n++] = l->items[i];
    }
    return SS_OK;
}

const ss_limits *ss_study_limits(const ss_study *s) { return s->limits; }

void ss_study_set_progress(ss_study *s, ss_progress_fn fn, void *ctx)
{
    s->progress = fn;
    s->progress_ctx = ctx;
}

long ss_study_points(const ss_study *s)
{
    double n = 1.0;
    for (int i = 0; i < s->n_dims; i++)
        n *= s->dims[i].n;
    if (s->trials > 0)
        n *= (double)s->trials;
    return n > (double)STUDY_MAX_POINTS ? -1 : (long)n;
}

/* ---- running ------------------------------------------------------------------------------ */

typedef struct run_shared {
    ss_study *s;
    const ss_table *nominal_figs;
    ss_table *out;
    long first, count; /* this shard's point range */
    int n_fixed;       /* columns before the figures */
    const int *lim_fig; /* per limit, its figure's index among the figures; NULL: no limits */
    int *fail_idx;      /* per point of the shard: the first limit it fails, -1 none, -2 unsolved */
    pthread_mutex_t lock;
    long next, done;
    ss_status fatal;
    ss_error fatal_err;
} run_shared;

/* The values of every swept and sampled name at point p (global index). */
static void point_values(const ss_study *s, long p, double *vals)
{
    long trial = s->trials > 0 ? p % s->trials : 0;
    long grid = s->trials > 0 ? p / s->trials : p;
    for (int d = s->n_dims - 1; d >= 0; d--) {
        vals[d] = s->dims[d].values[grid % s->dims[d].n];
        grid /= s->dims[d].n;
    }
    if (s->trials > 0) {
        /* one stream per trial index: identical draws whatever the grid point, thread or
         * shard that computes it */
        rng r;
        rng_seed(&r, s->seed, (uint64_t)trial);
        double common[STUDY_MAX_GROUPS];
        unsigned char drawn[STUDY_MAX_GROUPS] = {0};
        for (int t = 0; t < s->n_tols; t++) {
            const tol_spec *ts = &s->tols[t];
            double mid = 0.5 * (ts->lo + ts->hi), half = 0.5 * (ts->hi - ts->lo);
            double v;
            if (ts->group < 0) {
                v = ts->gauss ? mid + half / 3.0 * rng_gauss(&r)
                              : ts->lo + (ts->hi - ts->lo) * rng_uniform(&r);
            } else {
                /* a matched value: the group's common draw (made at its first member's turn)
                 * and its own, z = sqrt(rho) c + sqrt(1 - rho) e, corr(z_i, z_j) = rho */
                int g = ts->group;
                if (!drawn[g]) {
                    common[g] = rng_gauss(&r);
                    drawn[g] = 1;
                }
                double rho = s->groups[g].rho;
                double z = sqrt(rho) * common[g] + sqrt(1.0 - rho) * rng_gauss(&r);
                v = ts->gauss ? mid + half / 3.0 * z
                              : ts->lo + (ts->hi - ts->lo) * 0.5 * erfc(-z / sqrt(2.0));
            }
            vals[s->n_dims + t] = v;
        }
        /* an instance's own parameter around its card's sampled value: drawn value times the
         * card's sample over the card's nominal (the card's tolerance is drawn in this trial
         * already, whatever the order) */
        for (int t = 0; t < s->n_tols; t++) {
            int u = s->tols[t].scale_by;
            if (u >= 0)
                vals[s->n_dims + t] *= vals[s->n_dims + u] / s->tols[u].nominal;
        }
    }
}

/* The tolerances' values of trial `trial` (0-based) of the study's seed: what spread draws for
 * that trial, into vals[0 .. n_tols-1] (a study without swept values). */
void study_trial_values(ss_study *s, long trial, double *vals)
{
    link_instance_tols(s);
    long keep = s->trials;
    if (s->trials <= trial)
        s->trials = trial + 1;
    point_values(s, trial, vals);
    s->trials = keep;
}

int study_n_tols(const ss_study *s) { return s->n_tols; }

const char *study_tol_name(const ss_study *s, int t) { return s->tols[t].name; }

double study_tol_nominal(const ss_study *s, int t) { return s->tols[t].nominal; }

/* One point on the context sv: every value back to the nominal (the netlist with the study's
 * --set values), then the swept and sampled values set by name -- a sampled value replaces a
 * --set one of the same name, as the tolerance spreads around it -- and the figures solved. */
static ss_status solve_point(ss_study *s, ss_solver *sv, const double *vals, int n_vals_tol,
                             ss_table **out_figs, ss_error *err)
{
    ss_solver_reset_values(sv);
    ss_status st = SS_OK;
    for (int i = 0; i < s->n_dims + n_vals_tol && st == SS_OK; i++) {
        const char *name = i < s->n_dims ? s->dims[i].name : s->tols[i - s->n_dims].name;
        st = strcmp(name, "temp") == 0 ? ss_solver_set_temp(sv, vals[i], err)
                                       : ss_solver_set_value(sv, name, vals[i], err);
    }
    if (st == SS_OK)
        st = ss_figures_compute(sv, s->limits, out_figs, err);
    return st;
}

ss_status study_solve_point(ss_study *s, ss_solver *sv, const double *vals, int n_vals_tol,
                            ss_table **out_figs, ss_error *err)
{
    return solve_point(s, sv, vals, n_vals_tol, out_figs, err);
}

ss_status study_context(const ss_study *s, ss_solver **out, ss_error *err)
{
    ss_solver *sv = NULL;
    ss_status st = ss_solver_create(s->nominal, &sv, err);
    if (st == SS_OK && s->stage_in)
        st = ss_solver_set_stage(sv, s->stage_in, s->stage_out, err);
    if (st == SS_OK && s->noise_band_set)
        st = ss_solver_set_noise_band(sv, s->noise_lo_hz, s->noise_hi_hz, s->noise_per_decade,
                                      err);
    if (st == SS_OK && s->noise_weight_set)
        st = ss_solver_set_noise_weight(sv, s->noise_weight, err);
    if (st != SS_OK) {
        ss_solver_destroy(&sv);
        return st;
    }
    *out = sv;
    return SS_OK;
}

static int status_class(ss_status st)
{
    return st == SS_OK ? 0 : st == SS_ERR_NO_CONVERGENCE ? 3 : 2;
}

static void *worker(void *arg)
{
    run_shared *sh = arg;
    ss_study *s = sh->s;
    int n_vals = s->n_dims + (s->trials > 0 ? s->n_tols : 0);
    double vals[STUDY_MAX_DIMS + 4096];
    if (n_vals > (int)(sizeof vals / sizeof vals[0]))
        return NULL;
    ss_solver *sv = NULL; /* this thread's context: values change in place, point by point */
    ss_error ce = {0};
    if (study_context(s, &sv, &ce) != SS_OK) {
        pthread_mutex_lock(&sh->lock);
        if (sh->fatal == SS_OK) {
            sh->fatal = ce.code;
            sh->fatal_err = ce;
        }
        pthread_mutex_unlock(&sh->lock);
        return NULL;
    }
    for (;;) {
        pthread_mutex_lock(&sh->lock);
        long i = sh->next < sh->count && sh->fatal == SS_OK ? sh->next++ : -1;
        pthread_mutex_unlock(&sh->lock);
        if (i < 0)
            break;
        long p = sh->first + i;
        point_values(s, p, vals);
        ss_table *figs = NULL;
        ss_error e = {0};
        ss_status st = solve_point(s, sv, vals, s->trials > 0 ? s->n_tols : 0, &figs, &e);
        double *row = sh->out->data + (size_t)i * (size_t)sh->out->n_cols;
        row[0] = (double)p;
        for (int v = 0; v < n_vals; v++)
            row[1 + v] = vals[v];
        row[1 + n_vals] = status_class(st);
        const ss_table *nf = sh->nominal_figs;
        for (int f = 0; f < nf->n_rows; f++)
            row[sh->n_fixed + f] = st == SS_OK ? figures_value(figs, f, nf->row_labels[f])
                                               : SS_NAN;
        if (sh->lim_fig) {
            /* judged here, in the limits' order: the first one failing is named */
            int fail = st == SS_OK ? -1 : -2;
            for (int k = 0; fail == -1 && k < s->limits->n; k++) {
                const limit *lim = &s->limits->items[k];
                double v = sh->lim_fig[k] < 0 ? SS_NAN : row[sh->n_fixed + sh->lim_fig[k]];
                double x = limit_judged(lim, v);
                if (!(x >= lim->lo && x <= lim->hi))
                    fail = k;
            }
            sh->fail_idx[i] = fail;
            row[sh->n_fixed - 1] = fail == -1 ? 1.0 : 0.0;
        }
        ss_table_destroy(&figs);
        pthread_mutex_lock(&sh->lock);
        if (st == SS_ERR_NOMEM && sh->fatal == SS_OK) {
            sh->fatal = st;
            sh->fatal_err = e;
        }
        long done = ++sh->done;
        pthread_mutex_unlock(&sh->lock);
        if (s->progress)
            s->progress(s->progress_ctx, done, sh->count);
    }
    ss_solver_destroy(&sv);
    return NULL;
}

/* Names in each row's text the first limit it fails (fail_idx, as the workers judged): the
 * limit's quantity, "unsolved" for a point without figures, "" for a point that passes. One
 * copy of each name, shared by the rows. 0 ok, -1 no memory. */
static int label_failures(ss_table *t, const ss_limits *l, const int *fail_idx)
{
    const char **names = ss_alloc((size_t)l->n * sizeof *names);
    const char *unsolved = arena_strdup(&t->arena, "unsolved");
    const char *none = arena_strdup(&t->arena, "");
    int bad = !names || !unsolved || !none;
    for (int k = 0; !bad && k < l->n; k++)
        bad |= !(names[k] = arena_strdup(&t->arena, l->items[k].quantity));
    for (int i = 0; !bad && i < t->n_rows; i++)
        t->row_labels[i] = fail_idx[i] >= 0 ? names[fail_idx[i]] : fail_idx[i] == -2 ? unsolved
                                                                                   : none;
    ss_free(names);
    return bad ? -1 : 0;
}

ss_status ss_study_run(ss_study *s, ss_table **out_points, ss_error *err)
{
    long total = ss_study_points(s);
    if (total < 0)
        return err_set(err, SS_ERR_LIMIT, NULL, 0, "more than %ld points", STUDY_MAX_POINTS);
    if (s->n_dims == 0 && s->trials == 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "nothing to run: give --vary NAME=... and/or --trials N");
    /* a value both swept and sampled would take one of the two silently */
    for (int d = 0; s->trials > 0 && d < s->n_dims; d++)
        for (int t = 0; t < s->n_tols; t++)
            if (strcmp(s->dims[d].name, s->tols[t].name) == 0)
                return err_set(err, SS_ERR_INPUT, NULL, 0,
                               "--vary %s: %s also has a tolerance (--tol or .tolerance); a "
                               "tolerance run cannot both sweep and sample it",
                               s->dims[d].name, s->dims[d].name);
    ss_status st = ss_limits_check_names(s->limits, s->nominal_sv, err);
    if (st != SS_OK)
        return st;
    link_instance_tols(s);
    long first = total * (s->shard_k - 1) / s->shard_n;
    long end = total * s->shard_k / s->shard_n;
    /* the nominal run fixes the figure columns */
    ss_table *nominal_figs = NULL;
    ss_solver_reset_values(s->nominal_sv);
    st = ss_figures_compute(s->nominal_sv, s->limits, &nominal_figs, err);
    if (st != SS_OK)
        return st;
    int n_vals = s->n_dims + (s->trials > 0 ? s->n_tols : 0);
    /* with limits, each point is judged: a `pass` column after `status` and the first limit
     * it fails as text (failed_limit) before the figures */
    int judged = s->limits && s->limits->n > 0;
    int n_fixed = 2 + n_vals + judged;
    ss_table *t = table_create(n_fixed + nominal_figs->n_rows, judged ? TABLE_TEXT_COL : NULL);
    int bad = !t || table_set_col(t, 0, "point") != 0;
    if (!bad && judged) {
        t->label_at = n_fixed;
        bad |= table_set_col(t, n_fixed - 1, "pass") != 0;
    }
    for (int d = 0; !bad && d < s->n_dims; d++)
        bad |= table_set_col(t, 1 + d, s->dims[d].name) != 0;
    for (int v = s->n_dims; !bad && v < n_vals; v++)
        bad |= table_set_col(t, 1 + v, s->tols[v - s->n_dims].name) != 0;
    bad |= !t || table_set_col(t, 1 + n_vals, "status") != 0;
    for (int f = 0; !bad && f < nominal_figs->n_rows; f++)
        bad |= table_set_col(t, n_fixed + f, nominal_figs->row_labels[f]) != 0;
    if (bad || table_reserve(t, (int)(end - first > 0 ? end - first : 1)) != 0) {
        ss_table_destroy(&t);
        ss_table_destroy(&nominal_figs);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    for (long i = first; i < end; i++)
        table_add_row(t, NULL);
    int *lim_fig = NULL, *fail_idx = NULL;
    if (judged) {
        lim_fig = ss_alloc((size_t)s->limits->n * sizeof *lim_fig);
        fail_idx = ss_alloc((size_t)(end - first > 0 ? end - first : 1) * sizeof *fail_idx);
        if (!lim_fig || !fail_idx) {
            ss_free(lim_fig);
            ss_free(fail_idx);
            ss_table_destroy(&t);
            ss_table_destroy(&nominal_figs);
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        }
        for (int k = 0; k < s->limits->n; k++) {
            lim_fig[k] = -1;
            for (int f = 0; f < nominal_figs->n_rows && lim_fig[k] < 0; f++)
                if (strcmp(nominal_figs->row_labels[f], s->limits->items[k].quantity) == 0)
                    lim_fig[k] = f;
        }
    }
    run_shared sh;
    memset(&sh, 0, sizeof sh);
    sh.lim_fig = lim_fig;
    sh.fail_idx = fail_idx;
    sh.s = s;
    sh.nominal_figs = nominal_figs;
    sh.out = t;
    sh.first = first;
    sh.count = end - first;
    sh.n_fixed = n_fixed;
    pthread_mutex_init(&sh.lock, NULL);
    int n_threads = s->threads > 0 ? s->threads : ss_cpu_count();
    if (n_threads < 1)
        n_threads = 1;
    if (n_threads > STUDY_MAX_THREADS)
        n_threads = STUDY_MAX_THREADS;
    if (n_threads > sh.count)
        n_threads = sh.count > 0 ? (int)sh.count : 1;
    pthread_t tid[STUDY_MAX_THREADS];
    int started = 0;
    for (int i = 1; i < n_threads; i++)
        if (pthread_create(&tid[i], NULL, worker, &sh) == 0)
            started = i;
        else
            break;
    worker(&sh); /* the calling thread works too */
    for (int i = 1; i <= started; i++)
        pthread_join(tid[i], NULL);
    pthread_mutex_destroy(&sh.lock);
    ss_table_destroy(&nominal_figs);
    if (sh.fatal == SS_OK && judged && label_failures(t, s->limits, fail_idx) != 0) {
        sh.fatal = SS_ERR_NOMEM;
        err_set(&sh.fatal_err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    ss_free(lim_fig);
    ss_free(fail_idx);
    if (sh.fatal != SS_OK) {
        ss_table_destroy(&t);
        *err = sh.fatal_err;
        return sh.fatal;
    }
    *out_points = t;
    return SS_OK;
}

/* ---- identity (shards.c notes it in a run's manifest) ------------------------------------ */

ss_status study_identity(const ss_study *s, ss_strbuf *text, long *first, long *end, long *total,
                         ss_error *err)
{
    long n = ss_study_points(s);
    if (n < 0)
        return err_set(err, SS_ERR_LIMIT, NULL, 0, "more than %ld points", STUDY_MAX_POINTS);
    *total = n;
    *first = n * (s->shard_k - 1) / s->shard_n;
    *end = n * s->shard_k / s->shard_n;
    /* everything that decides the points' values, in a fixed order: the inputs by content
     * (not by path, so shards run from other folders or hosts agree), the overrides, the stage,
     * every swept value, every tolerance, the trial count and the seed */
    for (int i = 0; ss_circuit_input(s->nominal, i, NULL); i++) {
        const char *sha;
        ss_circuit_input(s->nominal, i, &sha);
        strbuf_printf(text, "input %s\n", sha);
    }
    for (int i = 0; i < s->n_sets; i++)
        strbuf_printf(text, "set %s=%s\n", s->sets[i].name, s->sets[i].value);
    if (s->stage_in)
        strbuf_printf(text, "stage %s %s\n", s->stage_in, s->stage_out);
    if (s->noise_band_set)
        strbuf_printf(text, "noise_band %.17g %.17g %d\n", s->noise_lo_hz, s->noise_hi_hz,
                      s->noise_per_decade);
    if (s->noise_weight_set)
        strbuf_printf(text, "noise_weight %s\n", s->noise_weight);
    for (int d = 0; d < s->n_dims; d++) {
        strbuf_printf(text, "vary %s", s->dims[d].name);
        for (int k = 0; k < s->dims[d].n; k++)
            strbuf_printf(text, " %.17g", s->dims[d].values[k]);
        strbuf_printf(text, "\n");
    }
    for (int t = 0; t < s->n_tols; t++)
        strbuf_printf(text, "tol %s %.17g %.17g %s\n", s->tols[t].name, s->tols[t].lo,
                      s->tols[t].hi, s->tols[t].gauss ? "gauss" : "uniform");
    for (int g = 0; g < s->n_groups; g++) {
        strbuf_printf(text, "match %.17g", s->groups[g].rho);
        for (int t = 0; t < s->n_tols; t++)
            if (s->tols[t].group == g)
                strbuf_printf(text, " %s", s->tols[t].name);
        strbuf_printf(text, "\n");
    }
    strbuf_printf(text, "trials %ld\nseed %llu\nlimits %s\n", s->trials, s->seed,
                  s->limits_sha256[0] ? s->limits_sha256 : "-");
    return text->failed ? err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory") : SS_OK;
}

const ss_circuit *study_nominal(const ss_study *s) { return s->nominal; }

void study_shard(const ss_study *s, int *k, int *n, unsigned long long *seed, long *trials)
{
    *k = s->shard_k;
    *n = s->shard_n;
    *seed = s->seed;
    *trials = s->trials;
}
