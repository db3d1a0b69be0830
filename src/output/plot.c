/* Public entry for the Bode plot: takes the stage tables, hands arrays to the SVG writer. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "netlist/circuit.h"
#include "solver/solver.h"
#include "output/svg.h"
#include "util/table.h"

ss_status ss_plot_write_bode(const ss_solver *sv, const ss_table *stage,
                             const ss_table *summary, const char *path, ss_error *err)
{
    int n = ss_table_rows(stage);
    double *buf = ss_alloc((size_t)(3 * (n ? n : 1)) * sizeof *buf);
    if (!buf)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int k = 0; k < n; k++) {
        buf[k] = ss_table_get(stage, k, 0);
        buf[n + k] = ss_table_get(stage, k, 2);
        buf[2 * n + k] = ss_table_get(stage, k, 3);
    }
    /* a long netlist title is cut so the plot title fits the page */
    char title[512];
    const char *t = sv->ckt->title && sv->ckt->title[0] ? sv->ckt->title : "stage";
    int max_title = 60;
    snprintf(title, sizeof title, "%.*s%s: v(%s) / %s", max_title, t,
             (int)strlen(t) > max_title ? "..." : "", sv->stage.out, sv->stage.in);
    svg_bode_input in = {title,
                         buf,
                         buf + n,
                         buf + 2 * n,
                         n,
                         ss_table_lookup(summary, "f_low_hz", 0),
                         ss_table_lookup(summary, "f_high_hz", 0),
                         ss_table_lookup(summary, "gain_mid_db", 0)};
    ss_status st = svg_write_bode(path, &in, err);
    ss_free(buf);
    return st;
}
