/* Solver contexts: made from a read-only circuit, owning everything that changes (solver.h). */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"
#include "mna/mna.h"
#include "solver/solver.h"

/* The context's copies of the circuit's models and elements, each element pointing to the
 * copy of its model. */
static int copy_values(ss_solver *sv)
{
    const ss_circuit *ckt = sv->ckt;
    sv->models = arena_alloc(&sv->arena, (size_t)(ckt->n_models + 1) * sizeof *sv->models);
    if (!sv->models)
        return -1;
    for (int m = 0; m < ckt->n_models; m++) {
        sv->models[m] = arena_alloc(&sv->arena, sizeof(model));
        if (!sv->models[m])
            return -1;
        *sv->models[m] = *ckt->models[m];
    }
    sv->n_elem = ckt->n_elem;
    sv->elem = ss_alloc((size_t)(ckt->n_elem + 1) * sizeof *sv->elem);
    if (!sv->elem)
        return -1;
    memcpy(sv->elem, ckt->elem, (size_t)ckt->n_elem * sizeof *sv->elem);
    for (int i = 0; i < ckt->n_elem; i++) {
        element *e = &sv->elem[i];
        if (!elem_has_model(e))
            continue;
        int mi = -1;
        strmap_get(&ckt->model_map, e->mod->name, &mi);
        e->mod = sv->models[mi];
    }
    return 0;
}

static int alloc_value_state(ss_solver *sv)
{
    const ss_circuit *ckt = sv->ckt;
    size_t np = (size_t)ckt->n_params + 1, ns = (size_t)ckt->tape.n_slot + 1;
    sv->param_val = arena_alloc(&sv->arena, np * sizeof *sv->param_val);
    sv->slot_val = arena_alloc(&sv->arena, ns * sizeof *sv->slot_val);
    sv->param_pin = arena_alloc(&sv->arena, np);
    sv->param_state = arena_alloc(&sv->arena, np);
    sv->elem_pin = arena_alloc(&sv->arena, (size_t)ckt->n_elem + 1);
    sv->model_pin = arena_alloc(&sv->arena, (size_t)(ckt->n_models + 1) * MODEL_MAX_PARAMS);
    if (!sv->param_val || !sv->slot_val || !sv->param_pin || !sv->param_state ||
        !sv->elem_pin || !sv->model_pin)
        return -1;
    for (int k = 0; k < ckt->n_params; k++)
        sv->param_val[k] = ckt->params[k].value;
    return 0;
}

static int warn_add(ss_solver *sv, const char *msg, int check, const char *subject,
                    const char *named);

static int copy_nodes(ss_solver *sv)
{
    const ss_circuit *ckt = sv->ckt;
    sv->cap_nodes = ckt->n_nodes + 16;
    sv->node_name = ss_alloc((size_t)sv->cap_nodes * sizeof *sv->node_name);
    sv->node_internal = ss_alloc((size_t)sv->cap_nodes);
    if (!sv->node_name || !sv->node_internal)
        return -1;
    memcpy(sv->node_name, ckt->node_name, (size_t)ckt->n_nodes * sizeof *sv->node_name);
    memset(sv->node_internal, 0, (size_t)sv->cap_nodes);
    sv->n_nodes = ckt->n_nodes;
    return 0;
}

ss_status ss_solver_create(const ss_circuit *ckt, ss_solver **out, ss_error *err)
{
    if (!ckt || !out)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "ss_solver_create: no circuit");
    ss_solver *sv = ss_alloc(sizeof *sv);
    if (!sv)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    memset(sv, 0, sizeof *sv);
    sv->ckt = ckt;
    sv->temp_c = ckt->temp_c;
    sv->stage = ckt->stage;
    sv->noise = ckt->noise;
    sv->ls = ckt->ls;
    int bad = copy_values(sv) != 0 || alloc_value_state(sv) != 0 || copy_nodes(sv) != 0;
    /* the circuit's own warnings (the parser's) come first */
    for (int i = 0; !bad && i < ckt->n_warnings; i++)
        bad = warn_add(sv, ckt->warnings[i].text, -1, ckt->warnings[i].subject,
                       ckt->warnings[i].check) != 0;
    if (bad) {
        ss_solver_destroy(&sv);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    *out = sv;
    return SS_OK;
}

void solver_unprepare(ss_solver *sv)
{
    mna_destroy(&sv->mna);
    ss_free(sv->x_op);
    ss_free(sv->work_rhs);
    ss_free(sv->work_x);
    ss_free(sv->x_refine);
    ss_free(sv->work_esc);
    ss_free(sv->work_bytes);
    ss_free(sv->work_zrhs);
    ss_free(sv->work_zx);
    ss_free(sv->ac_w);
    ss_free(sv->ac_rhs);
    sv->x_op = sv->work_rhs = sv->work_x = sv->x_refine = sv->work_esc = NULL;
    sv->work_bytes = NULL;
    sv->work_zrhs = sv->work_zx = sv->ac_rhs = NULL;
    sv->ac_w = NULL;
    sv->n_ac_w = 0;
    sv->n_nodes = sv->ckt->n_nodes; /* internal nodes are made again by the next prepare */
    sv->prepared = 0;
    solver_lost_op(sv);
}

void ss_solver_destroy(ss_solver **psv)
{
    if (!psv || !*psv)
        return;
    ss_solver *sv = *psv;
    solver_unprepare(sv);
    ss_free(sv->out_nodes);
    ss_free(sv->dc_devices);
    ss_free(sv->node_name);
    ss_free(sv->node_internal);
    ss_free(sv->elem);
    ss_free(sv->warnings);
    ss_free(sv->warning_lint);
    arena_clear(&sv->arena);
    ss_free(sv);
    *psv = NULL;
}

const ss_circuit *ss_solver_circuit(const ss_solver *sv) { return sv ? sv->ckt : NULL; }

void solver_lost_op(ss_solver *sv)
{
    sv->have_op = 0;
    sv->ac_serial = 0;
}

void solver_lost_ac(ss_solver *sv) { sv->ac_serial = 0; }

int solver_add_node(ss_solver *sv, const char *name)
{
    if (sv->n_nodes == sv->cap_nodes) {
        int ncap = sv->cap_nodes * 2;
        const char **nn = ss_realloc(sv->node_name, (size_t)ncap * sizeof *nn);
        if (!nn)
            return -1;
        sv->node_name = nn;
        unsigned char *ni = ss_realloc(sv->node_internal, (size_t)ncap);
        if (!ni)
            return -1;
        sv->node_internal = ni;
        sv->cap_nodes = ncap;
    }
    sv->node_name[sv->n_nodes] = name;
    sv->node_internal[sv->n_nodes] = 1;
    return sv->n_nodes++;
}

void solver_unknown_name(const ss_solver *sv, int unknown, char *buf, size_t len)
{
    int n_node_unknowns = sv->n_nodes - 1;
    if (unknown < n_node_unknowns) {
        int node = unknown + 1;
        if (sv->node_internal[node])
            snprintf(buf, len, "internal node '%s'", sv->node_name[node]);
        else
            snprintf(buf, len, "node '%s'", sv->node_name[node]);
        return;
    }
    for (int i = 0; i < sv->n_elem; i++) {
        if (sv->elem[i].branch == unknown) {
            snprintf(buf, len, "branch current of '%s'", sv->elem[i].name);
            return;
        }
    }
    snprintf(buf, len, "unknown #%d", unknown);
}

static int warn_add(ss_solver *sv, const char *msg, int check, const char *subject,
                    const char *named)
{
    for (int i = 0; i < sv->n_warnings; i++)
        if (strcmp(sv->warnings[i], msg) == 0)
            return 0;
    size_t n = (size_t)sv->n_warnings + 1;
    const char **nw = ss_realloc(sv->warnings, n * sizeof *nw);
    if (!nw)
        return -1;
    sv->warnings = nw;
    struct warning_lint *nl = ss_realloc(sv->warning_lint, n * sizeof *nl);
    if (!nl)
        return -1;
    sv->warning_lint = nl;
    char *copy = arena_strdup(&sv->arena, msg);
    if (!copy)
        return -1;
    nl[sv->n_warnings] = (struct warning_lint){check, subject, named};
    sv->warnings[sv->n_warnings++] = copy;
    return 0;
}

void solver_warn(ss_solver *sv, const char *fmt, ...)
{
    char msg[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    warn_add(sv, msg, -1, NULL, NULL);
}

int solver_warn_lint(ss_solver *sv, int check, const char *subject, const char *fmt, ...)
{
    char msg[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    return warn_add(sv, msg, check, subject, NULL);
}

const char *ss_solver_warning(const ss_solver *sv, int index)
{
    return (sv && index >= 0 && index < sv->n_warnings) ? sv->warnings[index] : NULL;
}

ss_status solver_temp_error(const ss_solver *sv, const element *e, const char *why,
                            ss_error *err)
{
    if (e->area != 1.0)
        return err_set(err, SS_ERR_INPUT, e->mod->file, e->mod->line,
                       "model '%s': at %g C with the area %g of %s, %s", e->mod->name,
                       sv->temp_c, e->area, e->name, why);
    return err_set(err, SS_ERR_INPUT, e->mod->file, e->mod->line, "model '%s': at %g C, %s",
                   e->mod->name, sv->temp_c, why);
}

/* The models of the context at temp_c: the cards' and every instance's own (values.c). */
static ss_status check_models_at(const ss_solver *sv, double temp_c, ss_error *err)
{
    ss_status st = models_check_temp(sv->models, sv->ckt->n_models, temp_c, err);
    for (int i = 0; st == SS_OK && sv->inst && i < sv->n_elem; i++)
        if (sv->inst[i] && sv->inst[i]->active) {
            model *m = &sv->inst[i]->m;
            ss_error e2 = {0};
            if (models_check_temp(&m, 1, temp_c, &e2) != SS_OK)
                st = err_set(err, e2.code, e2.file, e2.line, "%s (the parameters of %s): %s",
                             m->name, sv->elem[i].name, e2.message);
        }
    return st;
}

ss_status solver_check_temp(const ss_solver *sv, ss_error *err)
{
    return check_models_at(sv, sv->temp_c, err);
}

ss_status ss_solver_set_temp(ss_solver *sv, double temp_c, ss_error *err)
{
    if (!(temp_c > -SS_ZERO_C_IN_K && temp_c <= 1000.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "temperature %g C is outside -273.15 .. 1000 C", temp_c);
    ss_status st = check_models_at(sv, temp_c, err);
    if (st != SS_OK)
        return st;
    sv->temp_c = temp_c;
    solver_lost_op(sv);
    return SS_OK;
}

double ss_solver_temp_c(const ss_solver *sv) { return sv->temp_c; }

void ss_solver_analyses(const ss_solver *sv, ss_analysis_flags *f)
{
    ss_circuit_analyses(sv->ckt, f);
    f->stage = sv->stage.in != NULL;
    f->noise = sv->noise.want;
    f->large_signal = sv->ls.want;
}
