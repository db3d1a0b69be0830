/* The list of device kinds: adding a device is one file plus one line here. Lookup by
 * element letter and by model type. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"

/* Each kind's file defines its table; this list is the only place that names them all. */
extern const dev_ops resistor_ops, capacitor_ops, inductor_ops, vsource_ops, isource_ops,
    vcvs_ops, vccs_ops, cccs_ops, ccvs_ops, bjt_ops, jfet_ops, mosfet_ops,
    diode_ops;

/* The order is that of op.csv's element rows and the report's tables: V sources, then
 * transistors, then diodes (kinds without rows anywhere in between). */
static const dev_ops *const DEVICES[] = {
    &resistor_ops, &capacitor_ops, &inductor_ops, &vsource_ops, &isource_ops, &vcvs_ops,
    &vccs_ops,     &cccs_ops,      &ccvs_ops,     &bjt_ops,     &jfet_ops,    &mosfet_ops,
    &diode_ops,
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

const dev_ops *device_for_model_type(const char *name, int *type)
{
    for (int k = 0; k < device_count(); k++) {
        const char *const *t = DEVICES[k]->model_types;
        for (int i = 0; t && t[i]; i++)
            if (strcmp(t[i], name) == 0) {
                *type = i;
                return DEVICES[k];
            }
    }
    return NULL;
}

void model_types_text(const dev_ops *ops, char *buf, size_t len)
{
    const char *names[32];
    int n = 0;
    for (int k = 0; k < device_count(); k++) {
        const char *const *t = DEVICES[k]->model_types;
        if (ops && DEVICES[k] != ops)
            continue;
        for (int i = 0; t && t[i] && n < 32; i++)
            names[n++] = t[i];
    }
    buf[0] = '\0';
    for (int i = 0; i < n; i++)
        snprintf(buf + strlen(buf), len - strlen(buf), "%s%s",
                 i == 0 ? "" : i == n - 1 ? " or " : ", ", names[i]);
}

const char *initialism_article(const char *name)
{
    /* the letters whose names start with a vowel sound: a e f h i l m n o r s x */
    return name[0] && strchr("aefhilmnorsx", name[0]) ? "an" : "a";
}

int model_corner_spread(const model *m, int i, double *lo, double *hi)
{
    unsigned f = m->ops->model_params[i].flags;
    if (!(f & DMP_CORNER))
        return 0;
    double v = m->p[i];
    if (f & DMP_CORNER_SHIFT) {
        *lo = v - 0.5 * fabs(v);
        *hi = v + 0.5 * fabs(v);
    } else {
        *lo = 0.5 * v;
        *hi = 2.0 * v;
    }
    int dir = f & DMP_CORNER_LOWERS ? -1 : 1;
    if (f & DMP_CORNER_POLAR && m->type == 1)
        dir = -dir;
    return dir;
}

int model_param_index(const dev_ops *ops, const char *name)
{
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
