/* Values by name on a context: set, read, reset, and the replay of the expression tape
 * (circuit.h) that carries a changed .param to everything written in its terms. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"
#include "netlist/netlist.h"
#include "solver/solver.h"

/* ---- replay ------------------------------------------------------------------------------ */

typedef struct replay_ctx {
    ss_solver *sv;
    int scope; /* the tape scope evaluated in, -1 the globals */
    int depth;
    int failed_param; /* the global parameter whose text failed, -1 none */
} replay_ctx;

static int eval_param(replay_ctx *rc, int k, char *msg, size_t msg_len);

static int replay_lookup(void *vctx, const char *name, double *out, char *msg, size_t msg_len)
{
    replay_ctx *rc = vctx;
    const ss_circuit *ckt = rc->sv->ckt;
    if (rc->scope >= 0) {
        const tape_scope *ts = &ckt->tape.scope[rc->scope];
        for (int i = ts->first; i < ts->first + ts->n; i++)
            if (strcmp(ckt->tape.slot_name[i], name) == 0) {
                *out = rc->sv->slot_val[i];
                return 0;
            }
    }
    for (int k = 0; k < ckt->n_params; k++)
        if (strcmp(ckt->params[k].name, name) == 0) {
            if (eval_param(rc, k, msg, msg_len) != 0)
                return -1;
            *out = rc->sv->param_val[k];
            return 0;
        }
    if (strcmp(name, "pi") == 0) {
        *out = SS_PI;
        return 0;
    }
    snprintf(msg, msg_len, "unknown parameter '%s'", name);
    return -1;
}

static int eval_in(replay_ctx *rc, int scope, const char *text, double *out, char *msg,
                   size_t msg_len)
{
    int saved = rc->scope;
    rc->scope = scope;
    int r = expr_eval_value(text, &rc->depth, replay_lookup, rc, out, msg, msg_len);
    rc->scope = saved;
    return r;
}

/* Global parameter k at the context's values (a pinned one keeps its value). */
static int eval_param(replay_ctx *rc, int k, char *msg, size_t msg_len)
{
    ss_solver *sv = rc->sv;
    if (sv->param_state[k] == 2)
        return 0;
    if (sv->param_state[k] == 1) {
        snprintf(msg, msg_len, "parameter '%s' is defined in terms of itself",
                 sv->ckt->params[k].name);
        return -1;
    }
    sv->param_state[k] = 1;
    double v;
    if (eval_in(rc, -1, sv->ckt->params[k].text, &v, msg, msg_len) != 0) {
        if (rc->failed_param < 0)
            rc->failed_param = k;
        sv->param_state[k] = 0;
        return -1;
    }
    sv->param_val[k] = v;
    sv->param_state[k] = 2;
    return 0;
}

/* One tape entry evaluated and stored, unless what it writes is pinned. */
static ss_status replay_entry(replay_ctx *rc, const tape_entry *te, ss_error *err)
{
    ss_solver *sv = rc->sv;
    if (te->target == TAPE_ELEM && te->field == (int)offsetof(element, value) &&
        sv->elem_pin[te->index])
        return SS_OK;
    if (te->target == TAPE_MODEL && sv->model_pin[te->index * MODEL_MAX_PARAMS + te->field])
        return SS_OK;
    char msg[512];
    double v;
    if (eval_in(rc, te->scope, te->text, &v, msg, sizeof msg) != 0) {
        if (rc->failed_param >= 0) {
            const global_param *gp = &sv->ckt->params[rc->failed_param];
            return err_set(err, SS_ERR_INPUT, gp->file, gp->line, ".param %s: %s", gp->name,
                           msg);
        }
        return err_set(err, SS_ERR_INPUT, te->file, te->line, "%s: %s", te->text, msg);
    }
    switch (te->target) {
    case TAPE_ELEM:
        memcpy((char *)&sv->elem[te->index] + te->field, &v, sizeof v);
        break;
    case TAPE_MODEL:
        sv->models[te->index]->p[te->field] = v;
        break;
    case TAPE_SCOPE:
        sv->slot_val[te->field] = v;
        break;
    case TAPE_STAGE_LOAD:
        if (!(v > 0.0))
            return err_set(err, SS_ERR_INPUT, te->file, te->line,
                           ".stage: load must be a positive resistance, got %g", v);
        if (!sv->load_set) /* a load named on the context wins */
            sv->stage.load_ohm = v;
        break;
    default: /* an analysis setting, option or waveform value: fixed after parsing */
        if (memcmp(&v, &te->nominal, sizeof v) != 0 && (sv->fixed_conflict = 1))
            return err_set(err, SS_ERR_INPUT, te->file, te->line,
                           "'%s' is an analysis setting, option or waveform value and is fixed "
                           "once the netlist is read; it changes with the values set (%g, not "
                           "%g): set it in the netlist or with --set",
                           te->text, v, te->nominal);
    }
    return SS_OK;
}

/* The ranges a value change must respect, as the parser checks them. */
static ss_status check_values(const ss_solver *sv, ss_error *err)
{
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        const dev_ops *ops = e->ops;
        double v = e->value;
        if (ops->value_name && ((ops->value_range == VALUE_POSITIVE && !(v > 0.0)) ||
                                (ops->value_range == VALUE_NONNEG && !(v >= 0.0))))
            return err_set(err, SS_ERR_INPUT, e->file, e->line, "%s: %s must be %s, got %g",
                           e->name, ops->value_name,
                           ops->value_range == VALUE_POSITIVE ? "positive" : "zero or positive",
                           v);
        if (!isfinite(v))
            return err_set(err, SS_ERR_INPUT, e->file, e->line, "%s: %s is not finite",
                           e->name, ops->value_name ? ops->value_name : "value");
        if (elem_has_model(e) && !(e->area > 0.0 && isfinite(e->area)))
            return err_set(err, SS_ERR_INPUT, e->file, e->line,
                           "%s: area must be positive, got %g", e->name, e->area);
    }
    for (int m = 0; m < sv->ckt->n_models; m++) {
        char msg[512];
        const model *md = sv->models[m];
        if (model_range_check(md, msg, sizeof msg) != 0)
            return err_set(err, SS_ERR_INPUT, md->file, md->line, "%s", msg);
    }
    for (int i = 0; sv->inst && i < sv->n_elem; i++) {
        char msg[512];
        const inst_model *im = sv->inst[i];
        if (im && im->active && model_range_check(&im->m, msg, sizeof msg) != 0)
            return err_set(err, SS_ERR_INPUT, NULL, 0, "%s: %s", sv->elem[i].name, msg);
    }
    return solver_check_temp(sv, err);
}

ss_status solver_sync_values(ss_solver *sv, ss_error *err)
{
    if (!sv->values_dirty)
        return SS_OK;
    const ss_circuit *ckt = sv->ckt;
    for (int k = 0; k < ckt->n_params; k++)
        sv->param_state[k] = sv->param_pin[k] ? 2 : 0;
    replay_ctx rc = {sv, -1, 0, -1};
    sv->fixed_conflict = 0;
    ss_status st = SS_OK;
    for (int k = 0; k < ckt->n_params && st == SS_OK; k++) {
        char msg[512];
        if (eval_param(&rc, k, msg, sizeof msg) != 0) {
            const global_param *gp = &ckt->params[rc.failed_param];
            st = err_set(err, SS_ERR_INPUT, gp->file, gp->line, ".param %s: %s", gp->name, msg);
        }
    }
    for (int i = 0; i < ckt->tape.n_entry && st == SS_OK; i++)
        st = replay_entry(&rc, &ckt->tape.entry[i], err);
    /* an element's own parameters: its card's values as they now are, its own in their place */
    for (int i = 0; st == SS_OK && sv->inst && i < sv->n_elem; i++) {
        inst_model *im = sv->inst[i];
        if (!im || !im->active)
            continue;
        memcpy(im->m.p, im->shared->p, sizeof im->m.p);
        memcpy(im->m.given, im->shared->given, sizeof im->m.given);
        for (int f = 0; f < MODEL_MAX_PARAMS; f++)
            if (im->pin[f]) {
                im->m.p[f] = im->val[f];
                im->m.given[f] = 1;
            }
    }
    if (st == SS_OK)
        st = check_values(sv, err);
    if (st != SS_OK)
        return st;
    sv->values_dirty = 0;
    return SS_OK;
}

/* ---- by name ----------------------------------------------------------------------------- */

enum { NAME_PARAM = 1, NAME_ELEM, NAME_MODEL, NAME_INST };

/* What `name` names, in the --set order: a global parameter, an element's main value, a
 * model's parameter, then one element's own model parameter (INSTANCE.PARAM: `q1.bf`, that
 * transistor's alone). 0 when none (err set). */
static int resolve(const ss_solver *sv, const char *name, int *index, int *field, ss_error *err)
{
    const ss_circuit *ckt = sv->ckt;
    char low[1024]; /* a name that does not fit is not found, never cut short to another */
    if (!name || !name_lower_copy(name, low, sizeof low))
        return err_set(err, SS_ERR_INPUT, NULL, 0, "'%.60s' is no name of the circuit",
                       name ? name : "(null)"),
               0;
    for (int k = 0; k < ckt->n_params; k++)
        if (strcmp(ckt->params[k].name, low) == 0) {
            *index = k;
            return NAME_PARAM;
        }
    int e = circuit_find_elem(ckt, low);
    if (e >= 0) {
        if (!ckt->elem[e].ops->value_name)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "%s: a %s has no single value to set (set its model's parameters "
                           "as MODEL.PARAM)",
                           name, ckt->elem[e].ops->kind_name),
                   0;
        *index = e;
        return NAME_ELEM;
    }
    char *dot = strrchr(low, '.');
    int mi;
    if (dot) {
        *dot = '\0';
        if (strmap_get(&ckt->model_map, low, &mi)) {
            int pi = model_param_index(ckt->models[mi]->ops, dot + 1);
            if (pi < 0)
                return err_set(err, SS_ERR_INPUT, NULL, 0, "%s: model '%s' has no parameter '%s'",
                               name, low, dot + 1),
                       0;
            *index = mi;
            *field = pi;
            return NAME_MODEL;
        }
        int ei = circuit_find_elem(ckt, low);
        if (ei >= 0 && elem_has_model(&ckt->elem[ei])) {
            const model *md = ckt->elem[ei].mod;
            int pi = model_param_index(md->ops, dot + 1);
            if (pi < 0)
                return err_set(err, SS_ERR_INPUT, NULL, 0,
                               "%s: the model '%s' of %s has no parameter '%s'", name, md->name,
                               low, dot + 1),
                       0;
            *index = ei;
            *field = pi;
            return NAME_INST;
        }
    }
    return err_set(err, SS_ERR_INPUT, NULL, 0,
                   "%s: no parameter, element or model parameter of that name", name),
           0;
}

/* Element i's own model record, made on first use (in the context's arena, kept for reuse);
 * NULL when out of memory. */
static inst_model *inst_get(ss_solver *sv, int i)
{
    if (!sv->inst) {
        sv->inst = arena_alloc(&sv->arena, (size_t)(sv->n_elem + 1) * sizeof *sv->inst);
        if (!sv->inst)
            return NULL;
        memset(sv->inst, 0, (size_t)(sv->n_elem + 1) * sizeof *sv->inst);
    }
    if (!sv->inst[i]) {
        inst_model *im = arena_alloc(&sv->arena, sizeof *im);
        if (!im)
            return NULL;
        memset(im, 0, sizeof *im);
        im->shared = sv->elem[i].mod; /* the card's copy: no instance of it is active yet */
        sv->inst[i] = im;
    }
    return sv->inst[i];
}

ss_status ss_solver_set_value(ss_solver *sv, const char *name, double value, ss_error *err)
{
    int index = -1, field = -1;
    int kind = resolve(sv, name, &index, &field, err);
    if (!kind)
        return SS_ERR_INPUT;
    if (!isfinite(value))
        return err_set(err, SS_ERR_INPUT, NULL, 0, "%s: value %g is not finite", name, value);
    switch (kind) {
    case NAME_PARAM:
        sv->param_val[index] = value;
        sv->param_pin[index] = 1;
        break;
    case NAME_ELEM:
        sv->elem[index].value = value;
        sv->elem_pin[index] = 1;
        break;
    case NAME_MODEL:
        sv->models[index]->p[field] = value;
        sv->models[index]->given[field] = 1;
        sv->model_pin[index * MODEL_MAX_PARAMS + field] = 1;
        break;
    default: {
        inst_model *im = inst_get(sv, index);
        if (!im)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        if (!im->active) {
            im->m = *im->shared;
            memset(im->pin, 0, sizeof im->pin);
            im->active = 1;
            sv->elem[index].mod = &im->m;
        }
        im->val[field] = value;
        im->pin[field] = 1;
    }
    }
    sv->n_pins++;
    sv->values_dirty = 1;
    sv->recheck_structure = 1;
    solver_lost_op(sv);
    return SS_OK;
}

ss_status ss_solver_get_value(ss_solver *sv, const char *name, double *out_value, ss_error *err)
{
    int index = -1, field = -1;
    int kind = resolve(sv, name, &index, &field, err);
    if (!kind)
        return SS_ERR_INPUT;
    ss_status st = solver_sync_values(sv, err);
    if (st != SS_OK)
        return st;
    *out_value = kind == NAME_PARAM   ? sv->param_val[index]
                 : kind == NAME_ELEM  ? sv->elem[index].value
                 : kind == NAME_MODEL ? sv->models[index]->p[field]
                                      : sv->elem[index].mod->p[field];
    return SS_OK;
}

void ss_solver_reset_values(ss_solver *sv)
{
    const ss_circuit *ckt = sv->ckt;
    if (sv->n_pins > 0 || sv->values_dirty) {
        for (int i = 0; i < sv->n_elem; i++) { /* the parser's values; the rest is the context's */
            element *e = &sv->elem[i];
            const element *c = &ckt->elem[i];
            e->value = c->value;
            if (elem_is_source(e)) {
                e->ac_mag = c->ac_mag;
                e->ac_phase_deg = c->ac_phase_deg;
            } else if (elem_has_model(e)) {
                e->area = c->area;
            }
        }
        for (int m = 0; m < ckt->n_models; m++) {
            memcpy(sv->models[m]->p, ckt->models[m]->p, sizeof ckt->models[m]->p);
            memcpy(sv->models[m]->given, ckt->models[m]->given, sizeof ckt->models[m]->given);
        }
        for (int i = 0; sv->inst && i < sv->n_elem; i++)
            if (sv->inst[i] && sv->inst[i]->active) { /* back to the card's values */
                sv->inst[i]->active = 0;
                sv->elem[i].mod = sv->inst[i]->shared;
            }
        for (int k = 0; k < ckt->n_params; k++)
            sv->param_val[k] = ckt->params[k].value;
        memset(sv->param_pin, 0, (size_t)ckt->n_params);
        memset(sv->elem_pin, 0, (size_t)ckt->n_elem);
        memset(sv->model_pin, 0, (size_t)ckt->n_models * MODEL_MAX_PARAMS);
        sv->n_pins = 0;
        sv->recheck_structure = 1;
        sv->values_dirty = 0; /* the nominal values are the parse's own: nothing to replay */
        solver_lost_op(sv);
    }
    if (sv->temp_c != ckt->temp_c) {
        sv->temp_c = ckt->temp_c;
        solver_lost_op(sv);
    }
}
