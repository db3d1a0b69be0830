/* The list of device kinds: adding a device is one file plus one line here. Lookup by
 * element letter and by model type. */
#include <ctype.h>
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
