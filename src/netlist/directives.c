/* The analysis directives (.op, .temp, .options, .stage, .dc, .ac, .tran, .noise, ...) read
 * into the circuit, and their checks once every element is known. Solving is src/analysis's. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"
#include "devices/device.h"
#include "devices/wave.h"
#include "netlist/parser_internal.h"

/* `.options lint_off=NAME[,NAME...]`: the lint checks (analysis/lint.c) to silence. */
static int set_lint_off(parser *ps, const logline *ll, const char *text)
{
    for (const char *t = text; *t;) {
        size_t n = strcspn(t, " ,");
        if (n > 0) {
            char name[64] = "";
            if (n < sizeof name)
                memcpy(name, t, n);
            int k = lint_check_by_name(name);
            if (k < 0) {
                char known[512] = "";
                for (int j = 0; j < LINT_CHECK_COUNT; j++)
                    snprintf(known + strlen(known), sizeof known - strlen(known), "%s%s",
                             j ? ", " : "", lint_check_name(j));
                return line_error(ps, ll, ".options: lint_off: unknown warning name '%.*s' "
                                          "(known: %s)",
                                  (int)(n > 64 ? 64 : n), t, known),
                       -1;
            }
            ps->ckt->lint_off |= 1u << k;
        }
        t += n;
        t += strspn(t, " ,");
    }
    return 0;
}

static int set_option(parser *ps, const logline *ll, void *vctx, const char *name,
                      const char *text)
{
    (void)vctx;
    double v;
    /* each option once, on one line or across several */
    for (int k = 0; k < ps->n_opt; k++)
        if (strcmp(ps->opt_name[k], name) == 0)
            return line_error(ps, ll, ".options: %s given twice (first at %s:%d)", name,
                              ps->opt_at[k]->file, ps->opt_at[k]->line),
                   -1;
    if (ps->n_opt < (int)(sizeof ps->opt_name / sizeof ps->opt_name[0])) {
        ps->opt_name[ps->n_opt] = name;
        ps->opt_at[ps->n_opt++] = ll;
    }
    if (strcmp(name, "tran_method") == 0) { /* transient integration: docs/transient.md */
        if (strcmp(text, "trap") == 0)
            ps->ckt->tran.method = 0;
        else if (strcmp(text, "gear2") == 0)
            ps->ckt->tran.method = 1;
        else
            return line_error(ps, ll, ".options: tran_method must be trap or gear2, got '%s'",
                              text),
                   -1;
        return 0;
    }
    if (strcmp(name, "lint_off") == 0) /* sanity warnings to silence: docs/cli.md */
        return set_lint_off(ps, ll, text);
    if (strcmp(name, "model_extras") == 0) { /* read before the model cards (models.c) */
        if (strcmp(text, "error") != 0 && strcmp(text, "warn") != 0)
            return line_error(ps, ll, ".options: model_extras must be error or warn, got "
                                      "'%.40s'",
                              text),
                   -1;
        return 0;
    }
    if (line_value(ps, ll, NULL, text, ".options", name, &v) != 0)
        return -1;
    ss_options_set *o = &ps->ckt->opt;
    if (strcmp(name, "tol_rel") == 0 && v > 0.0 && v < 1.0)
        o->tol_rel = v;
    else if (strcmp(name, "tran_tol_rel") == 0 && v > 0.0 && v < 1.0)
        ps->ckt->tran.tol_rel = v;
    else if (strcmp(name, "tran_tol_v") == 0 && v > 0.0)
        ps->ckt->tran.tol_v = v;
    else if (strcmp(name, "tol_v") == 0 && v > 0.0)
        o->tol_v = v;
    else if (strcmp(name, "tol_i") == 0 && v > 0.0)
        o->tol_i = v;
    else if (strcmp(name, "gmin") == 0 && v >= 0.0 && v < 1.0)
        o->gmin = v;
    else if (strcmp(name, "newton_iters") == 0 && v >= 1.0 && v <= 100000.0)
        o->newton_iters = (int)v;
    else if (strcmp(name, "tol_rel") == 0 || strcmp(name, "tol_v") == 0 ||
             strcmp(name, "tol_i") == 0 || strcmp(name, "gmin") == 0 ||
             strcmp(name, "newton_iters") == 0 || strcmp(name, "tran_tol_rel") == 0 ||
             strcmp(name, "tran_tol_v") == 0)
        return line_error(ps, ll, ".options: %s = %g is out of range", name, v), -1;
    else
        return line_error(ps, ll,
                          ".options: unknown option '%s' (known: tol_rel, tol_v, tol_i, gmin, "
                          "newton_iters, tran_method, tran_tol_rel, tran_tol_v, lint_off, model_extras)",
                          name),
               -1;
    return 0;
}

static int set_stage(parser *ps, const logline *ll, void *vctx, const char *name,
                     const char *text)
{
    (void)vctx;
    ss_circuit *ckt = ps->ckt;
    if ((strcmp(name, "in") == 0 && ckt->stage.in) ||
        (strcmp(name, "out") == 0 && ckt->stage.out) ||
        (strcmp(name, "load") == 0 && ckt->stage.load_ohm > 0.0))
        return line_error(ps, ll, ".stage: '%s' given twice", name), -1;
    if (strcmp(name, "in") == 0)
        ckt->stage.in = text;
    else if (strcmp(name, "out") == 0)
        ckt->stage.out = text;
    else if (strcmp(name, "load") == 0) {
        double v;
        ps->tape_model = TAPE_HINT_STAGE_LOAD; /* a context may change it: not fixed */
        int rc = line_value(ps, ll, NULL, text, ".stage", "load", &v);
        ps->tape_model = -1;
        if (rc != 0)
            return -1;
        if (!(v > 0.0))
            return line_error(ps, ll, ".stage: load must be a positive resistance, got %g", v),
                   -1;
        ckt->stage.load_ohm = v;
    } else
        return line_error(ps, ll, ".stage: unknown field '%s' (known: in, out, load)", name), -1;
    return 0;
}

/* .large_signal fields (docs/transient.md): the signal frequency, the input amplitude THD is
 * computed at, and the THD the input amplitude is searched for. */
static int set_large_signal(parser *ps, const logline *ll, void *vctx, const char *name,
                            const char *text)
{
    (void)vctx;
    double v;
    ss_circuit *ckt = ps->ckt;
    int is_freq = strcmp(name, "freq") == 0, is_amp = strcmp(name, "amp") == 0;
    int is_thd = strcmp(name, "thd_target_pct") == 0;
    if (!is_freq && !is_amp && !is_thd)
        return line_error(ps, ll,
                          ".large_signal: unknown field '%s' (known: freq, amp, thd_target_pct)",
                          name),
               -1;
    if ((is_freq && ckt->ls.freq_hz > 0.0) || (is_amp && ckt->ls.amp > 0.0) ||
        (is_thd && ckt->ls.thd_target_pct > 0.0))
        return line_error(ps, ll, ".large_signal: '%s' given twice", name), -1;
    if (line_value(ps, ll, NULL, text, ".large_signal", name, &v) != 0)
        return -1;
    if (is_thd ? !(v > 0.0 && v < 100.0) : !(v > 0.0 && isfinite(v)))
        return line_error(ps, ll, ".large_signal: %s must be %s, got %g", name,
                          is_thd ? "between 0 and 100 (percent)" : "positive", v),
               -1;
    if (is_freq)
        ckt->ls.freq_hz = v;
    else if (is_amp)
        ckt->ls.amp = v;
    else
        ckt->ls.thd_target_pct = v;
    return 0;
}

/* F1..F2: two positive frequencies, F1 < F2, with the SI suffixes of values (0 or -1 with the
 * error set) */
static int noise_band_value(parser *ps, const logline *ll, const char *text, double *lo,
                            double *hi)
{
    const char *dots = strstr(text, "..");
    char first[256];
    size_t n = dots ? (size_t)(dots - text) : 0;
    if (!dots || n == 0 || n >= sizeof first || !dots[2])
        return line_error(ps, ll, ".noise: band= needs F1..F2 (two frequencies in Hz), got '%s'",
                          text),
               -1;
    memcpy(first, text, n);
    first[n] = '\0';
    if (value_parse(first, lo) != 0 || value_parse(dots + 2, hi) != 0)
        return line_error(ps, ll, ".noise: band= needs F1..F2 (two frequencies in Hz), got '%s'",
                          text),
               -1;
    if (!(*lo > 0.0 && *hi > *lo && isfinite(*hi)))
        return line_error(ps, ll, ".noise: band=%s needs 0 < F1 < F2", text), -1;
    if (*hi / *lo > NOISE_BAND_MAX_RATIO)
        return line_error(ps, ll, ".noise: band=%s spans more than %g decades", text,
                          log10(NOISE_BAND_MAX_RATIO)),
               -1;
    return 0;
}

static int set_noise(parser *ps, const logline *ll, void *vctx, const char *name,
                     const char *text)
{
    (void)vctx;
    noise_spec *ns = &ps->ckt->noise;
    int given = strcmp(name, "rs") == 0           ? ns->rs != NULL
                : strcmp(name, "band") == 0       ? ns->band_lo_hz > 0.0
                : strcmp(name, "per_decade") == 0 ? ns->per_decade > 0
                : strcmp(name, "weight") == 0     ? ns->weight != NOISE_WEIGHT_NONE
                                                  : -1;
    if (given < 0)
        return line_error(ps, ll,
                          ".noise: unknown field '%s' (known: rs, band, per_decade, weight)",
                          name),
               -1;
    if (given)
        return line_error(ps, ll, ".noise: '%s' given twice", name), -1;
    if (strcmp(name, "rs") == 0) {
        ns->rs = text;
    } else if (strcmp(name, "band") == 0) {
        return noise_band_value(ps, ll, text, &ns->band_lo_hz, &ns->band_hi_hz);
    } else if (strcmp(name, "per_decade") == 0) {
        double v;
        if (value_parse(text, &v) != 0 || !(v >= 2.0 && v <= NOISE_MAX_PER_DECADE) ||
            v != floor(v))
            return line_error(ps, ll,
                              ".noise: per_decade needs a whole number from 2 to %d, got '%s'",
                              NOISE_MAX_PER_DECADE, text),
                   -1;
        ns->per_decade = (int)v;
    } else {
        if (strcmp(text, "a") != 0)
            return line_error(ps, ll, ".noise: weight needs 'a' (A-weighting), got '%s'", text),
                   -1;
        ns->weight = NOISE_WEIGHT_A;
    }
    return 0;
}

/* ---- the directives: one handler each, dispatched through DIRECTIVES below ---------------- */

static ss_status dir_op(parser *ps, const logline *ll)
{
    (void)ll;
    ps->ckt->want_op = 1;
    return SS_OK;
}

static ss_status dir_temp(parser *ps, const logline *ll)
{
    if (ll->n_tok != 2)
        return line_error(ps, ll, ".temp takes one temperature in degrees Celsius");
    double t;
    if (line_value(ps, ll, NULL, ll->tok[1], NULL, "temperature", &t) != 0)
        return SS_ERR_INPUT;
    if (t <= -SS_ZERO_C_IN_K || t > 1000.0)
        return line_error(ps, ll, ".temp %g C is outside -273.15 .. 1000 C", t);
    ps->ckt->temp_c = t;
    return SS_OK;
}

static ss_status dir_options(parser *ps, const logline *ll)
{
    return parse_assignments(ps, ll, 1, set_option, NULL) == 0 ? SS_OK : ps->err->code;
}

static ss_status dir_stage(parser *ps, const logline *ll)
{
    ss_circuit *ckt = ps->ckt;
    ckt->stage.file = ll->file;
    ckt->stage.line = ll->line;
    return parse_assignments(ps, ll, 1, set_stage, NULL) == 0 ? SS_OK : ps->err->code;
}

static ss_status dir_dc(parser *ps, const logline *ll)
{
    ss_circuit *ckt = ps->ckt;
    int n = ll->n_tok - 1;
    if (n != 4 && n != 8)
        return line_error(ps, ll, ".dc expects SRC start stop step [SRC2 start2 stop2 step2]");
    ckt->dc.n = n / 4;
    for (int k = 0; k < ckt->dc.n; k++) {
        dc_sweep_spec *s = &ckt->dc.sweep[k];
        s->src = ll->tok[1 + 4 * k];
        s->file = ll->file;
        s->line = ll->line;
        if (line_value(ps, ll, NULL, ll->tok[2 + 4 * k], ".dc", "start", &s->start) ||
            line_value(ps, ll, NULL, ll->tok[3 + 4 * k], ".dc", "stop", &s->stop) ||
            line_value(ps, ll, NULL, ll->tok[4 + 4 * k], ".dc", "step", &s->step))
            return SS_ERR_INPUT;
        if (s->step == 0.0 || (s->stop - s->start) / s->step < 0.0)
            return line_error(ps, ll, ".dc %s: step %g does not lead from %g to %g", s->src,
                              s->step, s->start, s->stop);
        if (fabs((s->stop - s->start) / s->step) > 1e7)
            return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                           ".dc %s: more than 1e7 points", s->src);
    }
    return SS_OK;
}

double ac_point_count(int type, int points, double f1, double f2)
{
    if (type == AC_LIN)
        return points;
    /* computed in logarithms so that extreme ratios cannot overflow */
    double decades = log10(f2) - log10(f1);
    double per = type == AC_DEC ? decades : decades / log10(2.0);
    return floor(per * points + 1e-9) + 1.0;
}

static ss_status dir_ac(parser *ps, const logline *ll)
{
    ss_circuit *ckt = ps->ckt;
    if (ll->n_tok != 5)
        return line_error(ps, ll, ".ac expects dec|oct|lin N fstart fstop");
    const char *t = ll->tok[1];
    if (strcmp(t, "dec") == 0)
        ckt->ac.type = AC_DEC;
    else if (strcmp(t, "oct") == 0)
        ckt->ac.type = AC_OCT;
    else if (strcmp(t, "lin") == 0)
        ckt->ac.type = AC_LIN;
    else
        return line_error(ps, ll, ".ac: sweep type '%s' is not dec, oct or lin", t);
    double n, f1, f2;
    if (line_value(ps, ll, NULL, ll->tok[2], ".ac", "point count", &n) ||
        line_value(ps, ll, NULL, ll->tok[3], ".ac", "start frequency", &f1) ||
        line_value(ps, ll, NULL, ll->tok[4], ".ac", "stop frequency", &f2))
        return SS_ERR_INPUT;
    if (!(n >= 1.0) || n != floor(n))
        return line_error(ps, ll, ".ac: the point count must be a whole number >= 1, got %g",
                          n);
    if (n > 1e6)
        return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                       ".ac: more than 1e6 points");
    if (!(f1 > 0.0) || !(f2 > 0.0))
        return line_error(ps, ll, ".ac: frequencies must be positive (got %g and %g Hz)", f1,
                          f2);
    if (f2 < f1)
        return line_error(ps, ll, ".ac: stop frequency %g Hz is below start %g Hz", f2, f1);
    /* counted as the sweep counts (the same rounding allowance), so what passes here runs */
    double total = ac_point_count(ckt->ac.type, (int)n, f1, f2);
    if (total > AC_MAX_POINTS)
        return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                       ".ac: %.3g frequencies in all, more than the limit of 1e6", total);

    ckt->ac.want = 1;
    ckt->ac.points = (int)n;
    ckt->ac.fstart_hz = f1;
    ckt->ac.fstop_hz = f2;
    return SS_OK;
}

/* .expect, .tolerance and .choose: limits, tolerances and free values, kept as text, parsed and
 * checked by src/study and src/design */
static ss_status dir_study_line(parser *ps, const logline *ll)
{
    ss_circuit *ckt = ps->ckt;
    const char *d = ll->tok[0];
    if (d[1] == 'c' && ll->n_tok < 4)
        return line_error(ps, ll, ".choose needs NAME SERIES LO..HI (e.g. .choose R1 E24 1k..100k)");
    if (ll->n_tok < 2)
        return line_error(ps, ll, "%s needs a quantity and its %s", d,
                          d[1] == 'e' ? "limits" : "tolerance");
    const char *text = join_tokens(ps, ll, 1, ll->n_tok);
    struct study_line *nl =
        ss_realloc(ckt->study_lines, (size_t)(ckt->n_study_lines + 1) * sizeof *nl);
    if (!text || !nl)
        return nomem(ps);
    ckt->study_lines = nl;
    nl[ckt->n_study_lines].file = ll->file;
    nl[ckt->n_study_lines].line = ll->line;
    nl[ckt->n_study_lines].text = text;
    nl[ckt->n_study_lines].is_tolerance = d[1] == 't';
    nl[ckt->n_study_lines].is_choice = d[1] == 'c';
    ckt->n_study_lines++;
    return SS_OK;
}

/* .tran TSTEP TSTOP [TSTART]: rows of tran.csv at TSTART + k TSTEP (analysis/tran.c) */
static ss_status dir_tran(parser *ps, const logline *ll)
{
    ss_circuit *ckt = ps->ckt;
    if (ll->n_tok != 3 && ll->n_tok != 4)
        return line_error(ps, ll, ".tran expects TSTEP TSTOP [TSTART]");
    double step, stop, start = 0.0;
    if (line_value(ps, ll, NULL, ll->tok[1], ".tran", "step", &step) ||
        line_value(ps, ll, NULL, ll->tok[2], ".tran", "stop time", &stop) ||
        (ll->n_tok == 4 && line_value(ps, ll, NULL, ll->tok[3], ".tran", "start time", &start)))
        return SS_ERR_INPUT;
    if (!(step > 0.0) || !(stop > 0.0))
        return line_error(ps, ll, ".tran: step and stop time must be positive (got %g, %g s)",
                          step, stop);
    if (!(start >= 0.0 && start < stop))
        return line_error(ps, ll, ".tran: start time %g s must be in [0, stop time %g s)", start,
                          stop);
    if (step > stop - start)
        return line_error(ps, ll, ".tran: step %g s is longer than the span from %g s to %g s",
                          step, start, stop);
    if ((stop - start) / step > 1e7)
        return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                       ".tran: more than 1e7 output points");
    ckt->tran.step_s = step;
    ckt->tran.stop_s = stop;
    ckt->tran.start_s = start;
    ckt->tran.file = ll->file;
    ckt->tran.line = ll->line;
    ckt->tran.want = 1;
    return SS_OK;
}

static ss_status dir_large_signal(parser *ps, const logline *ll)
{
    ps->ckt->ls.want = 1;
    return parse_assignments(ps, ll, 1, set_large_signal, NULL) == 0 ? SS_OK : ps->err->code;
}

/* .noise v(OUT) SRC [rs=RNAME] [band=F1..F2] [per_decade=N] [weight=a]: names checked after
 * parsing (check_noise) */
static ss_status dir_noise(parser *ps, const logline *ll)
{
    ss_circuit *ckt = ps->ckt;
    if (ll->n_tok < 3)
        return line_error(ps, ll, ".noise expects v(OUT) SRC [rs=RESISTOR] [band=F1..F2] "
                                  "[per_decade=N] [weight=a]");
    const char *o = ll->tok[1];
    size_t len = strlen(o);
    if (len < 4 || strncmp(o, "v(", 2) != 0 || o[len - 1] != ')')
        return line_error(ps, ll, ".noise: the output must be written v(NODE), got '%s'", o);
    if (strchr(o, ','))
        return line_error(ps, ll,
                          ".noise: a differential output '%s' is not supported; name one "
                          "node, v(NODE)",
                          o);
    size_t b = 2, e = len - 1;
    while (b < e && isspace((unsigned char)o[b]))
        b++;
    while (e > b && isspace((unsigned char)o[e - 1]))
        e--;
    if (b == e)
        return line_error(ps, ll, ".noise: v() names no output node");
    char *node = arena_strndup(&ckt->arena, o + b, e - b);
    if (!node)
        return nomem(ps);
    ckt->noise.out = node;
    ckt->noise.src = ll->tok[2];
    ckt->noise.rs = NULL;
    ckt->noise.band_lo_hz = ckt->noise.band_hi_hz = 0.0;
    ckt->noise.per_decade = 0;
    ckt->noise.weight = NOISE_WEIGHT_NONE;
    ckt->noise.file = ll->file;
    ckt->noise.line = ll->line;
    ckt->noise.want = 1;
    return parse_assignments(ps, ll, 3, set_noise, NULL) == 0 ? SS_OK : ps->err->code;
}

/* Where a directive may stand and how often: every directive is top-level only unless
 * DIRECTIVE_IN_SUBCKT; a DIRECTIVE_ONCE one given a second time is an error, since which of
 * the two counts would be a guess. */
enum { DIRECTIVE_IN_SUBCKT = 1, DIRECTIVE_ONCE = 2 };

typedef struct directive_def {
    const char *name;
    ss_status (*handle)(parser *ps, const logline *ll); /* NULL: nothing to do in pass 2 */
    unsigned flags;
} directive_def;

static const directive_def DIRECTIVES[] = {
    {".param", NULL, DIRECTIVE_IN_SUBCKT}, /* pass 1, or when an instance is built */
    {".model", NULL, DIRECTIVE_IN_SUBCKT}, /* pass 1 */
    {".op", dir_op, 0},
    {".end", NULL, 0},
    {".temp", dir_temp, DIRECTIVE_ONCE},
    {".options", dir_options, 0}, /* each option once: set_option */
    {".option", dir_options, 0},
    {".stage", dir_stage, DIRECTIVE_ONCE},
    {".dc", dir_dc, DIRECTIVE_ONCE},
    {".ac", dir_ac, DIRECTIVE_ONCE},
    {".expect", dir_study_line, 0},
    {".tolerance", dir_study_line, 0},
    {".choose", dir_study_line, 0},
    {".tran", dir_tran, DIRECTIVE_ONCE},
    {".large_signal", dir_large_signal, DIRECTIVE_ONCE},
    {".noise", dir_noise, DIRECTIVE_ONCE},
    {".ends", NULL, 0}, /* pass 1; build_lines skips the bodies */
    {".subckt", NULL, 0},
};
#define N_DIRECTIVES ((int)(sizeof DIRECTIVES / sizeof DIRECTIVES[0]))
_Static_assert(N_DIRECTIVES <= DIRECTIVE_MAX, "parser.directive_first has a slot per directive");

ss_status directive(parser *ps, const logline *ll, const scope *sc)
{
    const char *d = ll->tok[0];
    int k = 0;
    while (k < N_DIRECTIVES && strcmp(DIRECTIVES[k].name, d) != 0)
        k++;
    const directive_def *def = k < N_DIRECTIVES ? &DIRECTIVES[k] : NULL;
    if (sc->depth != 0 && !(def && (def->flags & DIRECTIVE_IN_SUBCKT)))
        return line_error(ps, ll, "%s is not allowed inside a .subckt", d);
    if (!def)
        return line_error(ps, ll, "unknown directive '%s'", d);
    if (def->flags & DIRECTIVE_ONCE) {
        const logline *first = ps->directive_first[k];
        if (first)
            return line_error(ps, ll, "%s given twice (first at %s:%d)", d, first->file,
                              first->line);
        ps->directive_first[k] = ll;
    }
    return def->handle ? def->handle(ps, ll) : SS_OK;
}

/* A .dc sweep must name an independent source: checked before anything is solved. */
ss_status check_dc_sources(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    for (int k = 0; k < ckt->dc.n; k++) {
        const dc_sweep_spec *s = &ckt->dc.sweep[k];
        int idx = circuit_find_elem(ckt, s->src);
        if (idx < 0 || !elem_is_source(&ckt->elem[idx]))
            return err_set(ps->err, SS_ERR_INPUT, s->file, s->line,
                           ".dc: '%s' is not an independent voltage or current source", s->src);
    }
    return SS_OK;
}

/* A .noise line must name an existing output node and an independent source, and its rs= a
 * resistor: checked before anything is solved. */
ss_status check_noise(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    if (!ckt->noise.want)
        return SS_OK;
    int n = circuit_find_node(ckt, ckt->noise.out);
    if (n <= 0)
        return err_set(ps->err, SS_ERR_INPUT, ckt->noise.file, ckt->noise.line,
                       ".noise: output node '%s' %s", ckt->noise.out,
                       n == 0 ? "is ground" : "does not exist");
    ckt->noise.out = ckt->node_name[n];
    int idx = circuit_find_elem(ckt, ckt->noise.src);
    if (idx < 0 || !elem_is_source(&ckt->elem[idx]))
        return err_set(ps->err, SS_ERR_INPUT, ckt->noise.file, ckt->noise.line,
                       ".noise: '%s' is not an independent voltage or current source",
                       ckt->noise.src);
    ckt->noise.src = ckt->elem[idx].name;
    if (ckt->noise.rs) {
        idx = circuit_find_elem(ckt, ckt->noise.rs);
        if (idx < 0 || !elem_is(&ckt->elem[idx], DEV_RESISTOR))
            return err_set(ps->err, SS_ERR_INPUT, ckt->noise.file, ckt->noise.line,
                           ".noise: rs=%s is not a resistor of the circuit", ckt->noise.rs);
        ckt->noise.rs = ckt->elem[idx].name;
    }
    return SS_OK;
}

/* The sources' time-varying forms stay finite up to the .tran stop time. */
ss_status check_waves(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    if (!ckt->tran.want)
        return SS_OK;
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        char why[200];
        if (elem_is_source(e) && e->wave &&
            wave_check_until(e->wave, ckt->tran.stop_s, why, sizeof why) != 0)
            return err_set(ps->err, SS_ERR_INPUT, e->file, e->line, "%s: %s (.tran at %s:%d)",
                           e->name, why, ckt->tran.file, ckt->tran.line);
    }
    return SS_OK;
}

ss_status check_stage(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    if (!ckt->stage.in && !ckt->stage.out)
        return SS_OK;
    if (!ckt->stage.in || !ckt->stage.out)
        return err_set(ps->err, SS_ERR_INPUT, ckt->stage.file, ckt->stage.line,
                       ".stage needs both in=SOURCE and out=NODE");
    ss_error e2 = {0};
    if (circuit_stage_names(ckt, ckt->stage.in, ckt->stage.out, &ckt->stage.in, &ckt->stage.out,
                            &e2) != SS_OK)
        return err_set(ps->err, SS_ERR_INPUT, ckt->stage.file, ckt->stage.line, "%s",
                       e2.message);
    return SS_OK;
}
