/* Sanity checks ("lint") on a circuit at its operating point: the slips that still give a
 * plausible-looking run -- a misspelt node, `M` read as milli, `F` read as femto, a stage
 * transistor left cut off, a source straight across a junction. Each finding becomes a circuit
 * warning that names its check; nothing the analyses compute changes. The checks, their
 * thresholds (common practice of discrete amplifier design) and why: docs/cli.md. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"

/* thresholds (docs/cli.md, "Sanity warnings") */
#define LINT_R_MIN_OHM 1e-3       /* below: no resistor is made that small (a short was meant) */
#define LINT_R_MAX_OHM 1e12       /* above: beyond the largest parts sold (an open was meant) */
#define LINT_C_SIGNAL_MIN_F 1e-12 /* a coupling or bypass capacitor below passes nothing */
#define LINT_I_MAX_A 1e3          /* no device of a transistor stage carries a kiloampere */
#define LINT_MILLI_BELOW_OHM 1.0  /* `m` on a resistor below this: meg was meant */
#define LINT_FEMTO_BELOW_F 1e-12  /* `f` on a capacitor below this: farads were meant */

static const char *const LINT_NAMES[LINT_CHECK_COUNT] = {
    /* ORDER LINT_CHECK */
    "milli_suffix",      "femto_suffix",     "resistor_range", "one_connection",
    "coupling_cap_tiny", "stage_not_active", "huge_current",
};

const char *lint_check_name(int check)
{
    return check >= 0 && check < LINT_CHECK_COUNT ? LINT_NAMES[check] : NULL;
}

int lint_check_by_name(const char *name)
{
    for (int k = 0; k < LINT_CHECK_COUNT; k++)
        if (strcmp(LINT_NAMES[k], name) == 0)
            return k;
    return -1;
}

static int lint_on(const ss_solver *sv, int check) { return !(sv->ckt->lint_off & (1u << check)); }

/* What one pass over the elements gathers for the checks after it. */
typedef struct lint_survey {
    int src;              /* the stage source's element index, -1 without a stage */
    unsigned char *named; /* per element: 1 named by a suffix check, 2 a capacitor in series */
    int *first_elem;      /* per node: the first element on it (one_connection) */
    unsigned char *count; /* per node: its element terminals, counted up to 2 */
    int *uf;              /* per node: union-find over independent V sources (AC grounds) */
    int n_q, n_tiny;      /* BJTs; capacitors below 1 pF not named by femto_suffix */
    size_t n_ends;        /* element terminals in all */
} lint_survey;

static int uf_find(int *uf, int a)
{
    while (uf[a] != a) {
        uf[a] = uf[uf[a]];
        a = uf[a];
    }
    return a;
}

/* ---- the pass over the elements: values, connections, supplies --------------------------- */

/* An independent current source other than the stage's: open for the signal. */
static int is_other_current_source(const element *e, int i, int src)
{
    return elem_is(e, DEV_SOURCE) && elem_is(e, DEV_DRIVES_CURRENT) && i != src;
}

/* milli_suffix, femto_suffix and resistor_range on e. A value the suffix check names is not
 * named again by resistor_range (one slip, one warning) unless that suffix check is off; the
 * same holds for femto_suffix and coupling_cap_tiny (svy->named). 0 ok, -1 no memory. */
static int lint_value(ss_solver *sv, int i, lint_survey *svy)
{
    const element *e = &sv->elem[i];
    int is_r = elem_is(e, DEV_RESISTOR), is_c = elem_is(e, DEV_CAPACITOR);
    if (is_r && e->value_si_exp == -3 && e->value < LINT_MILLI_BELOW_OHM &&
        lint_on(sv, LINT_MILLI_SUFFIX)) {
        svy->named[i] = 1;
        return solver_warn_lint(sv, LINT_MILLI_SUFFIX, e->name,
                                 "%s:%d: %s: %g ohm: the suffix m is milli (also when written "
                                 "M: case is not kept); did you mean meg? [milli_suffix]",
                                 e->file, e->line, e->name, e->value);
    }
    if (is_c && e->value_si_exp == -15 && e->value < LINT_FEMTO_BELOW_F &&
        lint_on(sv, LINT_FEMTO_SUFFIX)) {
        svy->named[i] = 1;
        return solver_warn_lint(sv, LINT_FEMTO_SUFFIX, e->name,
                                 "%s:%d: %s: %g F: the suffix f is femto, not farad (farads are "
                                 "written as a plain number or with u, n, p) [femto_suffix]",
                                 e->file, e->line, e->name, e->value);
    }
    if (is_r && (e->value < LINT_R_MIN_OHM || e->value > LINT_R_MAX_OHM) &&
        lint_on(sv, LINT_RESISTOR_RANGE))
        return solver_warn_lint(sv, LINT_RESISTOR_RANGE, e->name,
                                 "%s:%d: %s: %g ohm is %s the range of resistors (1 mohm .. "
                                 "1 Tohm) [resistor_range]",
                                 e->file, e->line, e->name, e->value,
                                 e->value < LINT_R_MIN_OHM ? "below" : "above");
    return 0;
}

/* One pass: the value checks, terminal counts per node, the unions of the supplies, and how
 * many BJTs and small capacitors there are. Large boards pay for every pass over their
 * element records, so the later checks work from what this one gathers. */
static int lint_survey_pass(ss_solver *sv, lint_survey *svy)
{
    for (int n = 0; n < sv->n_nodes; n++)
        svy->uf[n] = n;
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (lint_value(sv, i, svy) != 0)
            return -1;
        svy->n_ends += e->n_node;
        for (int k = 0; k < e->n_node; k++) {
            int n = e->node[k];
            if (svy->count[n] == 0)
                svy->first_elem[n] = i;
            if (svy->count[n] < 2)
                svy->count[n]++;
        }
        /* a supply (an independent V source other than the stage's) holds its nodes together
         * for AC */
        if (elem_is(e, DEV_SOURCE) && !elem_is(e, DEV_DRIVES_CURRENT) && i != svy->src)
            svy->uf[uf_find(svy->uf, e->node[0])] = uf_find(svy->uf, e->node[1]);
        svy->n_q += e->ops->op_point != NULL;
        svy->n_tiny += elem_is(e, DEV_CAPACITOR) && e->value < LINT_C_SIGNAL_MIN_F &&
                      svy->named[i] != 1;
    }
    return 0;
}

/* A netlist node that only one element terminal touches carries no current: most often a
 * misspelt node name. Named with the line of that element. */
static int lint_one_connection(ss_solver *sv, const lint_survey *svy)
{
    for (int n = 1; n <= sv->ckt->n_netlist_nodes; n++) {
        if (svy->count[n] != 1)
            continue;
        const element *e = &sv->elem[svy->first_elem[n]];
        if (solver_warn_lint(sv, LINT_ONE_CONNECTION, sv->node_name[n],
                              "%s:%d: node '%s' has only one connection (%s): a misspelt node "
                              "name? [one_connection]",
                              e->file, e->line, sv->node_name[n], e->name) != 0)
            return -1;
    }
    return 0;
}

/* ---- the stage's signal network ---------------------------------------------------------- */

/* The graph the stage's signal travels: one vertex per node (0 .. n_nodes-1) and one per
 * element (n_nodes + i), an edge from an element to each of its terminal nodes that is not an
 * AC ground. AC grounds are ground and every node held to it by independent voltage sources
 * (the supplies; the stage source itself excepted). Independent current sources other than the
 * stage source are open to the signal and have no edges. */
typedef struct sig_graph {
    int *off, *adj;        /* adjacency in compressed rows: adj[off[v] .. off[v+1]-1] */
    int *disc, *low, *par; /* depth-first search from the stage source: discovery order
                              (0: not reached), low link, parent vertex (-1 root) */
    int *q, *tiny;         /* the BJTs and the small capacitors, in netlist order */
    unsigned char *acg;    /* per node: 1 when an AC ground */
    unsigned char *side;   /* per node: 1 a stage transistor's emitter, 2 one resistor away */
} sig_graph;

/* Fills g (arrays from one block *mem, freed by the caller) and runs the search from the stage
 * source's vertex. 0 ok, -1 no memory. */
static int sig_graph_build(const ss_solver *sv, const lint_survey *svy, sig_graph *g,
                           void **mem)
{
    int nn = sv->n_nodes, nv = nn + sv->n_elem, src = svy->src;
    size_t n_ends = svy->n_ends;
    /* off (nv + 1), adj (2 n_ends), disc, low, par, it (nv), q, tiny; acg, side (nn),
     * skipped (nv) bytes */
    size_t n_int = 5 * (size_t)nv + 1 + 2 * n_ends + (size_t)svy->n_q + (size_t)svy->n_tiny;
    *mem = ss_alloc(n_int * sizeof(int) + 2 * (size_t)nn + (size_t)nv);
    if (!*mem)
        return -1;
    int *p = *mem;
    g->off = p, p += nv + 1;
    g->adj = p, p += 2 * n_ends;
    g->disc = p, p += nv;
    g->low = p, p += nv;
    g->par = p, p += nv;
    int *it = p;
    p += nv;
    g->q = p, p += svy->n_q;
    g->tiny = p, p += svy->n_tiny;
    g->acg = (unsigned char *)p;
    g->side = g->acg + nn;
    unsigned char *skipped = g->side + nn;

    int root0 = uf_find(svy->uf, 0);
    for (int n = 0; n < nn; n++)
        g->acg[n] = uf_find(svy->uf, n) == root0;

    /* edges, both directions: count (and list the BJTs and small capacitors), offsets, fill
     * (it[] as the fill cursor) */
    int n_q = 0, n_tiny = 0;
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (e->ops->op_point)
            g->q[n_q++] = i;
        else if (elem_is(e, DEV_CAPACITOR) && e->value < LINT_C_SIGNAL_MIN_F && svy->named[i] != 1)
            g->tiny[n_tiny++] = i;
        else if (is_other_current_source(e, i, src))
            continue;
        for (int k = 0; k < e->n_node; k++)
            if (!g->acg[e->node[k]]) {
                g->off[e->node[k] + 1]++;
                g->off[nn + i + 1]++;
            }
    }
    for (int v = 0; v < nv; v++)
        g->off[v + 1] += g->off[v];
    memcpy(it, g->off, (size_t)nv * sizeof *it);
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (is_other_current_source(e, i, src))
            continue;
        for (int k = 0; k < e->n_node; k++) {
            int n = e->node[k];
            if (g->acg[n])
                continue;
            g->adj[it[n]++] = nn + i;
            g->adj[it[nn + i]++] = n;
        }
    }

    /* iterative depth-first search with low links (R. E. Tarjan, "Depth-first search and
     * linear graph algorithms", SIAM J. Comput. 1(2), 146-160, 1972): the edge parent -> v of
     * the tree is a bridge exactly when low[v] > disc[parent]. The first edge back to the
     * parent is the tree edge itself; a second one (an element with two terminals on one
     * node) is a real cycle. No stack: the search climbs back up through par[]. */
    memcpy(it, g->off, (size_t)nv * sizeof *it);
    int root = nn + src, t = 0, v = root;
    g->disc[root] = g->low[root] = ++t;
    g->par[root] = -1;
    while (v >= 0) {
        if (it[v] < g->off[v + 1]) {
            int w = g->adj[it[v]++];
            if (w == g->par[v] && !skipped[v]) {
                skipped[v] = 1;
                continue;
            }
            if (!g->disc[w]) {
                g->disc[w] = g->low[w] = ++t;
                g->par[w] = v;
                v = w;
            } else if (g->disc[w] < g->low[v]) {
                g->low[v] = g->disc[w];
            }
        } else {
            int up = g->par[v];
            if (up >= 0 && g->low[v] < g->low[up])
                g->low[up] = g->low[v];
            v = up;
        }
    }
    return 0;
}

/* coupling_cap_tiny and stage_not_active: the checks that need the stage's signal network. */
static int lint_stage(ss_solver *sv, lint_survey *svy)
{
    int out = svy->src >= 0 ? circuit_find_node(sv->ckt, sv->stage.out) : -1;
    int want_c = lint_on(sv, LINT_COUPLING_CAP_TINY) && svy->n_tiny > 0;
    int want_q = lint_on(sv, LINT_STAGE_NOT_ACTIVE) && svy->n_q > 0;
    if (svy->src < 0 || out <= 0 || !(want_c || want_q))
        return 0; /* nothing to look at (a board of passives and 1 nF capacitors): no graph */
    sig_graph g;
    void *mem = NULL;
    if (sig_graph_build(sv, svy, &g, &mem) != 0)
        return -1;
    int nn = sv->n_nodes, bad = 0;

    /* a capacitor on every path from the stage source to the output: on the search tree's path
     * from the output back to the source, the capacitors whose edge down that path is a
     * bridge */
    for (int v = out; g.disc[out] && g.par[v] >= 0; v = g.par[v]) {
        int c = g.par[v] - nn;
        if (c >= 0 && elem_is(&sv->elem[c], DEV_CAPACITOR) && g.low[v] > g.disc[g.par[v]] &&
            !svy->named[c])
            svy->named[c] = 2;
    }

    /* emitter-side nodes of the stage transistors: the emitter, and a node one resistor away
     * from it (a split emitter resistor); a capacitor from one to an AC ground bypasses it */
    for (int k = 0; k < svy->n_q; k++) {
        const element *q = &sv->elem[g.q[k]];
        int emitter = q->node[q->ops->bypass_terminal];
        if (g.disc[nn + g.q[k]] && !g.acg[emitter])
            g.side[emitter] = 1;
    }
    for (int k = 0; k < svy->n_q; k++) {
        const element *q = &sv->elem[g.q[k]];
        int emitter = q->node[q->ops->bypass_terminal];
        if (g.side[emitter] != 1)
            continue;
        for (int j = g.off[emitter]; j < g.off[emitter + 1]; j++) {
            const element *r = &sv->elem[g.adj[j] - nn];
            if (!elem_is(r, DEV_RESISTOR))
                continue;
            int other = r->node[0] == emitter ? r->node[1] : r->node[0];
            if (!g.acg[other] && !g.side[other])
                g.side[other] = 2;
        }
    }

    for (int k = 0; k < svy->n_tiny && !bad && want_c; k++) {
        const element *e = &sv->elem[g.tiny[k]];
        int a = e->node[0], b = e->node[1];
        int n = g.acg[a] && g.side[b] ? b : g.acg[b] && g.side[a] ? a : -1;
        if (svy->named[g.tiny[k]] == 2)
            bad = solver_warn_lint(sv, LINT_COUPLING_CAP_TINY, e->name,
                                    "%s:%d: %s: %g F in series with the signal path (%s to node "
                                    "%s) is below 1 pF: it passes almost nothing "
                                    "[coupling_cap_tiny]",
                                    e->file, e->line, e->name, e->value, sv->stage.in,
                                    sv->stage.out);
        else if (n > 0)
            bad = solver_warn_lint(sv, LINT_COUPLING_CAP_TINY, e->name,
                                    "%s:%d: %s: %g F bypassing emitter-side node '%s' to AC "
                                    "ground is below 1 pF: it bypasses almost nothing "
                                    "[coupling_cap_tiny]",
                                    e->file, e->line, e->name, e->value, sv->node_name[n]);
    }

    /* every transistor the signal network reaches, in its amplifying region (a BJT's forward
     * active, a FET's saturation: the kind names it) */
    double vt = analysis_vt(sv);
    for (int k = 0; k < svy->n_q && !bad && want_q; k++) {
        const element *e = &sv->elem[g.q[k]];
        if (!g.disc[nn + g.q[k]])
            continue;
        dev_op_point op;
        e->ops->op_point(e, sv->x_op, vt, sv->ckt->opt.gmin, &op);
        if (op.amplifying)
            continue;
        bad = solver_warn_lint(sv, LINT_STAGE_NOT_ACTIVE, e->name,
                                "%s:%d: %s: stage transistor in %s at the operating point, not "
                                "%s (%s) [stage_not_active]",
                                e->file, e->line, e->name, op.region,
                                e->ops->amplifying_region ? e->ops->amplifying_region
                                                          : "amplifying",
                                op.detail);
    }
    ss_free(mem);
    return bad;
}

/* ---- huge_current ------------------------------------------------------------------------ */

/* Every element's terminal currents from its own equations (the kcl hook) at the operating
 * point; the largest above LINT_I_MAX_A is named. r[] is n_unknowns zeros, left zero. */
static int lint_currents(ss_solver *sv, double *r)
{
    const double *x = sv->x_op;
    dev_load_ctx lc = {.x = x,
                       .gmin_s = sv->ckt->opt.gmin,
                       .src_scale = 1.0,
                       .vt_v = analysis_vt(sv),
                       .mode = LOAD_FROM_X,
                       .ckt_elem = sv->elem};
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (!e->ops->kcl)
            continue;
        e->ops->kcl(e, x, &lc, r);
        double worst = 0.0;
        for (int k = 0; k < e->n_node; k++)
            if (e->node[k] > 0 && fabs(r[e->node[k] - 1]) > worst)
                worst = fabs(r[e->node[k] - 1]);
        /* leave r[] zero for the next element: kcl writes only at the element's own nodes,
         * internal nodes and branch */
        for (int k = 0; k < e->n_node; k++)
            if (e->node[k] > 0)
                r[e->node[k] - 1] = 0.0;
        for (int k = 0; k < 3; k++)
            if (e->inode[k] > 0)
                r[e->inode[k] - 1] = 0.0;
        if (e->branch >= 0)
            r[e->branch] = 0.0;
        if (worst <= LINT_I_MAX_A)
            continue;
        if (solver_warn_lint(sv, LINT_HUGE_CURRENT, e->name,
                              "%s:%d: %s: %.4g A at the operating point is above 1 kA: a source "
                              "straight across a junction or a short? [huge_current]",
                              e->file, e->line, e->name, worst) != 0)
            return -1;
    }
    return 0;
}

/* ---- the public entry points ------------------------------------------------------------- */

ss_status ss_lint_run(ss_solver *sv, int *out_n, ss_error *err)
{
    ss_status st;
    if (!sv->have_op && (st = op_solve_into(sv, NULL, err)) != SS_OK)
        return st;
    int nn = sv->n_nodes;
    /* r (n_unknowns doubles), first_elem, uf (nn ints), count (nn), named (n_elem bytes) */
    void *mem = ss_alloc((size_t)sv->n_unknowns * sizeof(double) +
                         2 * (size_t)nn * sizeof(int) + (size_t)nn + (size_t)sv->n_elem);
    if (!mem)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    double *r = mem;
    lint_survey svy = {.src = sv->stage.in ? circuit_find_elem(sv->ckt, sv->stage.in) : -1};
    svy.first_elem = (int *)(r + sv->n_unknowns);
    svy.uf = svy.first_elem + nn;
    svy.count = (unsigned char *)(svy.uf + nn);
    svy.named = svy.count + nn;
    int bad = lint_survey_pass(sv, &svy);
    if (!bad && lint_on(sv, LINT_ONE_CONNECTION))
        bad = lint_one_connection(sv, &svy);
    if (!bad)
        bad = lint_stage(sv, &svy);
    if (!bad && lint_on(sv, LINT_HUGE_CURRENT))
        bad = lint_currents(sv, r);
    ss_free(mem);
    if (bad)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (out_n) {
        int n = 0;
        for (int i = 0; i < sv->n_warnings; i++)
            n += sv->warning_lint[i].check >= 0 || sv->warning_lint[i].named;
        *out_n = n;
    }
    return SS_OK;
}

const char *ss_solver_warning_lint(const ss_solver *sv, int index, const char **subject)
{
    if (!sv || index < 0 || index >= sv->n_warnings)
        return NULL;
    const struct warning_lint *wl = &sv->warning_lint[index];
    if (wl->check < 0 && !wl->named)
        return NULL;
    if (subject)
        *subject = wl->subject;
    return wl->check >= 0 ? lint_check_name(wl->check) : wl->named;
}
