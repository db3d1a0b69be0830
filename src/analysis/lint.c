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
#define LINT_R_MIN_OHM 1e-3      /* below: no resistor is made that small (a short was meant) */
#define LINT_R_MAX_OHM 1e12      /* above: beyond the largest parts sold (an open was meant) */
#define LINT_C_SIGNAL_MIN_F 1e-12 /* a coupling or bypass capacitor below passes nothing */
#define LINT_I_MAX_A 1e3         /* no device of a transistor stage carries a kiloampere */
#define LINT_MILLI_BELOW_OHM 1.0 /* `m` on a resistor below this: meg was meant */
#define LINT_FEMTO_BELOW_F 1e-12 /* `f` on a capacitor below this: farads were meant */

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

static int lint_on(const ss_circuit *ckt, int check) { return !(ckt->lint_off & (1u << check)); }

/* ---- values: the suffix traps and the range of resistors ---------------------------------- */

/* milli_suffix, femto_suffix, resistor_range. A value the suffix check names is not named
 * again by the range checks (one slip, one warning), unless that suffix check is off; the
 * same holds for femto_suffix and coupling_cap_tiny (flag in named[]). */
static int lint_values(ss_circuit *ckt, unsigned char *named)
{
    int bad = 0;
    for (int i = 0; i < ckt->n_elem && !bad; i++) {
        const element *e = &ckt->elem[i];
        char kind = e->ops->letter;
        if (kind == 'r' && e->value_si_exp == -3 && e->value < LINT_MILLI_BELOW_OHM &&
            lint_on(ckt, LINT_MILLI_SUFFIX)) {
            named[i] = 1;
            bad = circuit_warn_lint(ckt, LINT_MILLI_SUFFIX, e->name,
                                    "%s:%d: %s: %g ohm: the suffix m is milli (also when written "
                                    "M: case is not kept); did you mean meg? [milli_suffix]",
                                    e->file, e->line, e->name, e->value);
        } else if (kind == 'c' && e->value_si_exp == -15 && e->value < LINT_FEMTO_BELOW_F &&
                   lint_on(ckt, LINT_FEMTO_SUFFIX)) {
            named[i] = 1;
            bad = circuit_warn_lint(ckt, LINT_FEMTO_SUFFIX, e->name,
                                    "%s:%d: %s: %g F: the suffix f is femto, not farad (farads "
                                    "are written as a plain number or with u, n, p) "
                                    "[femto_suffix]",
                                    e->file, e->line, e->name, e->value);
        } else if (kind == 'r' && (e->value < LINT_R_MIN_OHM || e->value > LINT_R_MAX_OHM) &&
                   lint_on(ckt, LINT_RESISTOR_RANGE)) {
            bad = circuit_warn_lint(ckt, LINT_RESISTOR_RANGE, e->name,
                                    "%s:%d: %s: %g ohm is %s the range of resistors (1 mohm .. "
                                    "1 Tohm) [resistor_range]",
                                    e->file, e->line, e->name, e->value,
                                    e->value < LINT_R_MIN_OHM ? "below" : "above");
        }
    }
    return bad;
}

/* ---- one_connection ---------------------------------------------------------------------- */

/* A netlist node that only one element terminal touches carries no current: most often a
 * misspelt node name. Named with the line of that element. */
static int lint_one_connection(ss_circuit *ckt, int *first_elem, unsigned char *count)
{
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        for (int k = 0; k < e->n_node; k++) {
            int n = e->node[k];
            if (n <= 0 || n > ckt->n_netlist_nodes)
                continue;
            if (count[n] == 0)
                first_elem[n] = i;
            if (count[n] < 2)
                count[n]++;
        }
    }
    for (int n = 1; n <= ckt->n_netlist_nodes; n++) {
        if (count[n] != 1)
            continue;
        const element *e = &ckt->elem[first_elem[n]];
        if (circuit_warn_lint(ckt, LINT_ONE_CONNECTION, ckt->node_name[n],
                              "%s:%d: node '%s' has only one connection (%s): a misspelt node "
                              "name? [one_connection]",
                              e->file, e->line, ckt->node_name[n], e->name) != 0)
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
    int n_vert;
    int *off, *adj;            /* adjacency in compressed rows: adj[off[v] .. off[v+1]-1] */
    int *disc, *low, *par;     /* depth-first search from the stage source: discovery order
                                  (0: not reached), low link, parent vertex (-1 root) */
    unsigned char *acg;        /* per node: 1 when an AC ground */
} sig_graph;

static int uf_find(int *uf, int a)
{
    while (uf[a] != a) {
        uf[a] = uf[uf[a]];
        a = uf[a];
    }
    return a;
}

static int elem_has_edges(const ss_circuit *ckt, int i, int src)
{
    return i == src || ckt->elem[i].ops->letter != 'i';
}

/* Fills g (arrays from one block *mem, freed by the caller) and runs the search from the stage
 * source's vertex. 0 ok, -1 no memory. */
static int sig_graph_build(const ss_circuit *ckt, int src, sig_graph *g, void **mem)
{
    int nn = ckt->n_nodes, nv = nn + ckt->n_elem;
    size_t n_ends = 0;
    for (int i = 0; i < ckt->n_elem; i++)
        n_ends += ckt->elem[i].n_node;
    /* off (nv + 1), adj (2 n_ends), disc, low, par, it (nv), uf (nn); acg, skipped bytes */
    size_t n_int = (size_t)nv + 1 + 2 * n_ends + 4 * (size_t)nv + (size_t)nn;
    *mem = ss_alloc(n_int * sizeof(int) + (size_t)nn + (size_t)nv);
    if (!*mem)
        return -1;
    int *p = *mem;
    g->n_vert = nv;
    g->off = p, p += nv + 1;
    g->adj = p, p += 2 * n_ends;
    g->disc = p, p += nv;
    g->low = p, p += nv;
    g->par = p, p += nv;
    int *it = p;
    p += nv;
    int *uf = p;
    p += nn;
    g->acg = (unsigned char *)p;
    unsigned char *skipped = g->acg + nn;

    /* AC grounds: union the two nodes of every independent V source but the stage source */
    for (int n = 0; n < nn; n++)
        uf[n] = n;
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        if (e->ops->letter == 'v' && i != src)
            uf[uf_find(uf, e->node[0])] = uf_find(uf, e->node[1]);
    }
    int root0 = uf_find(uf, 0);
    for (int n = 0; n < nn; n++)
        g->acg[n] = uf_find(uf, n) == root0;

    /* edges, both directions: count, offsets, fill (it[] as the fill cursor) */
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        if (!elem_has_edges(ckt, i, src))
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
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        if (!elem_has_edges(ckt, i, src))
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

/* coupling_cap_tiny and stage_not_active: the checks that need the stage's signal network.
 * named[i] is 1 for an element a suffix check named already; set to 2 here for a capacitor in
 * series with the signal path. */
static int lint_stage(ss_circuit *ckt, unsigned char *named)
{
    int src = circuit_find_elem(ckt, ckt->stage_in);
    int out = circuit_find_node(ckt, ckt->stage_out);
    if (src < 0 || out <= 0)
        return 0;
    sig_graph g;
    void *mem = NULL;
    if (sig_graph_build(ckt, src, &g, &mem) != 0)
        return -1;
    int nn = ckt->n_nodes, bad = 0;

    /* a capacitor on every path from the stage source to the output: on the search tree's path
     * from the output back to the source, the capacitors whose edge down that path is a
     * bridge */
    for (int v = out; g.disc[out] && g.par[v] >= 0; v = g.par[v]) {
        int c = g.par[v] - nn;
        if (c >= 0 && ckt->elem[c].ops->letter == 'c' && g.low[v] > g.disc[g.par[v]] &&
            !named[c])
            named[c] = 2;
    }

    /* emitter-side nodes of the stage transistors: the emitter, and a node one resistor away
     * from it (a split emitter resistor); a capacitor from one to an AC ground bypasses it */
    unsigned char *side = g.acg + nn; /* reuse: the search's bytes, one per vertex >= nn */
    memset(side, 0, (size_t)nn);
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        if (e->ops->letter == 'q' && g.disc[nn + i] && !g.acg[e->node[2]])
            side[e->node[2]] = 1;
    }
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        if (e->ops->letter != 'r')
            continue;
        for (int k = 0; k < 2; k++)
            if (side[e->node[k]] == 1 && !g.acg[e->node[1 - k]] && !side[e->node[1 - k]])
                side[e->node[1 - k]] = 2;
    }

    for (int i = 0; i < ckt->n_elem && !bad && lint_on(ckt, LINT_COUPLING_CAP_TINY); i++) {
        const element *e = &ckt->elem[i];
        if (e->ops->letter != 'c' || named[i] == 1 || !(e->value < LINT_C_SIGNAL_MIN_F))
            continue;
        int a = e->node[0], b = e->node[1];
        int n = g.acg[a] && side[b] ? b : g.acg[b] && side[a] ? a : -1;
        if (named[i] == 2)
            bad = circuit_warn_lint(ckt, LINT_COUPLING_CAP_TINY, e->name,
                                    "%s:%d: %s: %g F in series with the signal path (%s to node "
                                    "%s) is below 1 pF: it passes almost nothing "
                                    "[coupling_cap_tiny]",
                                    e->file, e->line, e->name, e->value, ckt->stage_in,
                                    ckt->stage_out);
        else if (n > 0)
            bad = circuit_warn_lint(ckt, LINT_COUPLING_CAP_TINY, e->name,
                                    "%s:%d: %s: %g F bypassing emitter-side node '%s' to AC "
                                    "ground is below 1 pF: it bypasses almost nothing "
                                    "[coupling_cap_tiny]",
                                    e->file, e->line, e->name, e->value, ckt->node_name[n]);
    }

    /* every transistor the signal network reaches, in forward-active operation */
    double vt = analysis_vt(ckt);
    for (int i = 0; i < ckt->n_elem && !bad && lint_on(ckt, LINT_STAGE_NOT_ACTIVE); i++) {
        const element *e = &ckt->elem[i];
        if (e->ops->letter != 'q' || !g.disc[nn + i])
            continue;
        bjt_op_info info;
        bjt_op_details(e, ckt->x_op, vt, ckt->opt.gmin, &info);
        if (strcmp(info.region, "forward active") == 0)
            continue;
        bad = circuit_warn_lint(ckt, LINT_STAGE_NOT_ACTIVE, e->name,
                                "%s:%d: %s: stage transistor in %s at the operating point, not "
                                "forward active (Vbe = %.4g V, Vce = %.4g V, Ic = %.4g A) "
                                "[stage_not_active]",
                                e->file, e->line, e->name, info.region, info.vbe_v, info.vce_v,
                                info.ic_a);
    }
    ss_free(mem);
    return bad;
}

/* ---- huge_current ------------------------------------------------------------------------ */

/* Every element's terminal currents from its own equations (the kcl hook) at the operating
 * point; the largest above LINT_I_MAX_A is named. r[] is n_unknowns zeros, left zero. */
static int lint_currents(ss_circuit *ckt, double *r)
{
    const double *x = ckt->x_op;
    dev_load_ctx lc = {NULL, NULL, x, ckt->opt.gmin, 1.0, analysis_vt(ckt), LOAD_FROM_X, 0,
                       ckt->elem};
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
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
        if (circuit_warn_lint(ckt, LINT_HUGE_CURRENT, e->name,
                              "%s:%d: %s: %.4g A at the operating point is above 1 kA: a source "
                              "straight across a junction or a short? [huge_current]",
                              e->file, e->line, e->name, worst) != 0)
            return -1;
    }
    return 0;
}

/* ---- the public entry points ------------------------------------------------------------- */

ss_status ss_lint_run(ss_circuit *ckt, int *out_n, ss_error *err)
{
    ss_status st;
    if (!ckt->have_op && (st = op_solve_into(ckt, NULL, err)) != SS_OK)
        return st;
    int nn = ckt->n_nodes;
    size_t bytes = (size_t)ckt->n_unknowns * sizeof(double) + (size_t)nn * sizeof(int) +
                   (size_t)nn + (size_t)ckt->n_elem;
    void *mem = ss_alloc(bytes);
    if (!mem)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    double *r = mem;
    int *first_elem = (int *)(r + ckt->n_unknowns);
    unsigned char *count = (unsigned char *)(first_elem + nn);
    unsigned char *named = count + nn;
    int bad = lint_values(ckt, named);
    if (!bad && lint_on(ckt, LINT_ONE_CONNECTION))
        bad = lint_one_connection(ckt, first_elem, count);
    if (!bad && ckt->stage_in)
        bad = lint_stage(ckt, named);
    if (!bad && lint_on(ckt, LINT_HUGE_CURRENT))
        bad = lint_currents(ckt, r);
    ss_free(mem);
    if (bad)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (out_n) {
        int n = 0;
        for (int i = 0; i < ckt->n_warnings; i++)
            n += ckt->warning_lint[i].check >= 0;
        *out_n = n;
    }
    return SS_OK;
}

const char *ss_circuit_warning_lint(const ss_circuit *ckt, int index, const char **subject)
{
    if (!ckt || index < 0 || index >= ckt->n_warnings || ckt->warning_lint[index].check < 0)
        return NULL;
    if (subject)
        *subject = ckt->warning_lint[index].subject;
    return lint_check_name(ckt->warning_lint[index].check);
}
