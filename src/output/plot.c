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
    /* a long netlist title is cut (at a character, with an ellipsis) so the plot title keeps
     * its ": v(out) / in" whole within the 64 characters the plot's frame holds (svg.c cuts
     * whatever is still too wide) */
    char title[512], tail[160];
    const char *t = sv->ckt->title && sv->ckt->title[0] ? sv->ckt->title : "stage";
    snprintf(tail, sizeof tail, ": v(%s) / %s", sv->stage.out, sv->stage.in);
    size_t tail_chars = 0, chars = 0, bytes = 0;
    for (const char *c = tail; *c; c++)
        tail_chars += ((unsigned char)*c & 0xC0) != 0x80;
    size_t max_chars = tail_chars + 16 < 64 ? 64 - tail_chars - 1 : 16;
    int cut = 0;
    for (; t[bytes] && bytes < 300; bytes++)
        if (((unsigned char)t[bytes] & 0xC0) != 0x80 && ++chars > max_chars) {
            cut = 1;
            break;
        }
    cut |= t[bytes] != '\0';
    while (cut && bytes > 0 && t[bytes - 1] == ' ')
        bytes--;
    snprintf(title, sizeof title, "%.*s%s%s", (int)bytes, t, cut ? "\xE2\x80\xA6" : "", tail);
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
