/* Recording the expression tape (circuit.h) while parsing: each value computed from an
 * {expression}, the subcircuit-instance parameters and the scopes they live in. */
#include <string.h>

#include "netlist/parser_internal.h"

int tape_new_scope(parser *ps)
{
    expr_tape *t = &ps->ckt->tape;
    if (t->n_scope == t->cap_scope) {
        int ncap = t->cap_scope ? 2 * t->cap_scope : 16;
        tape_scope *ns = ss_realloc(t->scope, (size_t)ncap * sizeof *ns);
        if (!ns)
            return nomem(ps), -1;
        t->scope = ns;
        t->cap_scope = ncap;
    }
    t->scope[t->n_scope] = (tape_scope){t->n_slot, 0};
    return t->n_scope++;
}

/* The next parameter slot of scope `id` (the newest scope: instances are built depth-first,
 * so a scope's parameters are all added before an inner instance opens its own). */
static int tape_new_slot(parser *ps, int id, const char *name)
{
    expr_tape *t = &ps->ckt->tape;
    if (t->n_slot == t->cap_slot) {
        int ncap = t->cap_slot ? 2 * t->cap_slot : 32;
        const char **nn = ss_realloc(t->slot_name, (size_t)ncap * sizeof *nn);
        if (!nn)
            return nomem(ps), -1;
        t->slot_name = nn;
        t->cap_slot = ncap;
    }
    t->slot_name[t->n_slot] = name;
    t->scope[id].n++;
    return t->n_slot++;
}

int tape_record(parser *ps, const tape_entry *te)
{
    expr_tape *t = &ps->ckt->tape;
    if (t->n_entry == t->cap_entry) {
        int ncap = t->cap_entry ? 2 * t->cap_entry : 32;
        tape_entry *ne = ss_realloc(t->entry, (size_t)ncap * sizeof *ne);
        if (!ne)
            return nomem(ps), -1;
        t->entry = ne;
        t->cap_entry = ncap;
    }
    t->entry[t->n_entry++] = *te;
    return 0;
}

int tape_scope_param(parser *ps, const logline *ll, int id, const char *name, const char *text,
                     int eval_scope)
{
    int slot = tape_new_slot(ps, id, name);
    if (slot < 0)
        return -1;
    tape_entry te = {text, ll->file, ll->line, eval_scope, TAPE_SCOPE, id, slot, 0.0};
    return tape_record(ps, &te);
}

int tape_value(parser *ps, const logline *ll, const scope *sc, const char *text, double *out)
{
    ss_circuit *ckt = ps->ckt;
    tape_entry te = {text, ll->file, ll->line, sc ? sc->tape_id : -1, TAPE_FIXED, 0, 0, *out};
    char *at = (char *)out;
    char *cur = (char *)&ckt->elem[ckt->n_elem];
    if (ps->tape_model == TAPE_HINT_STAGE_LOAD) {
        te.target = TAPE_STAGE_LOAD;
    } else if (ps->tape_model >= 0) { /* a model card's parameter (models.c says which) */
        te.target = TAPE_MODEL;
        te.index = ps->tape_model;
        te.field = ps->tape_param;
    } else if (ckt->elem && ckt->n_elem < ckt->cap_elem && at >= cur &&
               at + sizeof(double) <= cur + sizeof(element)) { /* the element being read */
        te.target = TAPE_ELEM;
        te.index = ckt->n_elem;
        te.field = (int)(at - cur);
    }
    return tape_record(ps, &te);
}
