/* The list of device kinds: adding a device is one file plus one line here. Lookup by
 * element letter and by model type. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"

/* The order is that of op.csv's element rows and the report's tables: V sources, then
 * transistors, then diodes (kinds without rows anywhere in between). */
static const dev_ops *const DEVICES[] = {
    &resistor_ops, &capacitor_ops, &inductor_ops, &vsource_ops, &isource_ops, &vcvs_ops,
    &vccs_ops,     &cccs_ops,      &ccvs_ops,     &bjt_ops,     &diode_ops,
};

int device_count(void) { return (int)(sizeof DEVICES / sizeof DEVICES[0]); }

const dev_ops *device_at(int index)
{
    return index >= 0 && index < device_count() ? DEVICES[index] : NULL;
}

const dev_ops *device_by_letter(char letter)
{
    char l = (char)tolower((unsigned char)letter);
    for (size_t i = 0; i < sizeof DEVICES / sizeof DEVICES[0]; i++)
        if (DEVICES[i]->letter == l)
            return DEVICES[i];
    return NULL;
}

const dev_ops *device_for_model_type(enum model_type t)
{
    return t == MODEL_D ? &diode_ops : &bjt_ops;
}

int model_corner_param(const model *m)
{
    const dev_ops *ops = device_for_model_type(m->type);
    for (int i = 0; i < ops->n_model_params; i++)
        if (ops->model_params[i].flags & DMP_CORNER)
            return i;
    return -1;
}

int model_param_index(enum model_type t, const char *name)
{
    const dev_ops *ops = device_for_model_type(t);
    for (int i = 0; i < ops->n_model_params; i++)
        if (strcmp(ops->model_params[i].name, name) == 0)
            return i;
    return -1;
}

/* ---- the parameter tables of docs/models.md -------------------------------------------- */

/* "> 0", "\u2265 0", "0 \u2264 x < 1", "any" */
static void range_text(const dev_model_param *p, char *buf, size_t len)
{
    const char *lo_rel = p->flags & DMP_MIN_OPEN ? "<" : "\u2264";
    const char *hi_rel = p->flags & DMP_MAX_OPEN ? "<" : "\u2264";
    if (!isfinite(p->min) && !isfinite(p->max))
        snprintf(buf, len, "any");
    else if (!isfinite(p->max))
        snprintf(buf, len, "%s %g", p->flags & DMP_MIN_OPEN ? ">" : "\u2265", p->min);
    else
        snprintf(buf, len, "%g %s x %s %g", p->min, lo_rel, hi_rel, p->max);
}

void device_param_table_md(const dev_ops *ops, ss_strbuf *out)
{
    static const char *const uses[] = {"dc", "ac", "noise", "tran", "temp"};
    strbuf_printf(out, "| parameter | default | range | unit | used in | meaning |\n"
                       "| --- | --- | --- | --- | --- | --- |\n");
    for (int i = 0; i < ops->n_model_params; i++) {
        const dev_model_param *p = &ops->model_params[i];
        char def[48], range[64], used[64] = "";
        if (isinf(p->def))
            snprintf(def, sizeof def, "\u221e");
        else
            snprintf(def, sizeof def, "%g", p->def);
        range_text(p, range, sizeof range);
        for (int k = 0; k < 5; k++)
            if (p->uses & (1u << k))
                snprintf(used + strlen(used), sizeof used - strlen(used), "%s%s",
                         used[0] ? ", " : "", uses[k]);
        strbuf_printf(out, "| `%s` | %s | %s%s | %s | %s | %s%s |\n", p->name, def, range,
                      p->flags & DMP_ZERO_INF ? " (0: \u221e)" : "", p->unit[0] ? p->unit : "-",
                      used, p->meaning, p->flags & DMP_CORNER ? "; spread by the corners" : "");
    }
}
