/* The human-readable report on a stream: node voltages, one row per transistor with region,
 * diodes, and the stage block. Numbers in engineering notation; CSVs carry full precision. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/analysis.h"
#include "output/output.h"

static const char *eng(char *buf, size_t len, double v, const char *unit)
{
    return fmt_eng(buf, len, v, unit);
}

/* The stage block: every figure with its unit and where it was taken; the load compared with
 * the stage's own output impedance (docs/stage.md). */
static void report_stage(const ss_solver *sv, const ss_table *summary, FILE *f)
{
    char a[48], b[48], c[48];
    fprintf(f, "\nStage: input source %s, output node %s", sv->stage.in, sv->stage.out);
    if (sv->stage.load_ohm > 0.0)
        fprintf(f, ", load %s", eng(a, sizeof a, sv->stage.load_ohm, "ohm"));
    fprintf(f, "\n");
    double g_db = ss_table_lookup(summary, "gain_mid_db", 0);
    double f_mid = ss_table_lookup(summary, "f_mid_hz", 0);
    double f_lo = ss_table_lookup(summary, "f_low_hz", 0);
    double f_hi = ss_table_lookup(summary, "f_high_hz", 0);
    double bw = ss_table_lookup(summary, "bandwidth_hz", 0);
    double zin = ss_table_lookup(summary, "zin_mid_ohm", 0);
    double zout = ss_table_lookup(summary, "zout_mid_ohm", 0);
    /* a current-driven stage's gain is a transimpedance */
    int e_in = circuit_find_elem(sv->ckt, sv->stage.in);
    const char *g_unit = e_in >= 0 && elem_is(&sv->elem[e_in], DEV_DRIVES_CURRENT) ? "V/A" : "V/V";
    fprintf(f, "  mid-band gain   %.3f dB (%s) at %s\n", g_db,
            eng(a, sizeof a, pow(10.0, g_db / 20.0), g_unit), eng(b, sizeof b, f_mid, "Hz"));
    double ph = sv->stage_phase_mid_deg;
    fprintf(f, "  mid-band phase  %.1f deg%s\n", ph,
            fabs(fabs(ph) - 180.0) < 45.0 ? " (inverting)" : fabs(ph) < 45.0 ? " (non-inverting)"
                                                                             : "");
    fprintf(f, "  low -3 dB       %s\n",
            isnan(f_lo) ? "not in the swept range" : eng(a, sizeof a, f_lo, "Hz"));
    fprintf(f, "  high -3 dB      %s\n",
            isnan(f_hi) ? "not in the swept range" : eng(a, sizeof a, f_hi, "Hz"));
    if (!isnan(bw))
        fprintf(f, "  bandwidth       %s\n", eng(a, sizeof a, bw, "Hz"));
    fprintf(f, "  Zin  (mid-band) %s\n", eng(a, sizeof a, zin, "ohm"));
    double load = sv->stage.load_ohm;
    const element *drawn = sv->stage_load_elem1 > 0 ? &sv->elem[sv->stage_load_elem1 - 1] : NULL;
    double own = sv->stage_zout_own_ohm;
    if (drawn) {
        fprintf(f, "  Zout (mid-band) %s with the load %s (%s) in the netlist\n",
                eng(b, sizeof b, zout, "ohm"), drawn->name, eng(c, sizeof c, load, "ohm"));
        fprintf(f, "  Zout of the stage alone %s (without %s: what the load sees)\n",
                eng(b, sizeof b, own, "ohm"), drawn->name);
    } else {
        fprintf(f, "  Zout (mid-band) %s\n", eng(b, sizeof b, zout, "ohm"));
    }
    if (load > 0.0 && own * 10.0 > load)
        fprintf(f,
                "  warning: the stage's own Zout %s is not ten times below the %s load; loading "
                "costs gain (rule of thumb: Zout <= load/10)%s\n",
                eng(b, sizeof b, own, "ohm"), eng(a, sizeof a, load, "ohm"),
                drawn ? "" : " [no resistor of the load's value from the output to ground in "
                             "the netlist: compared with the Zout solved]");
}

#define REPORT_MAX_NODES 100

/* The device tables of the report, one per kind that has one in the registry's order: fn
 * gets the kind's heading with its first line, then each further line with heading NULL. The
 * power column is op.csv's power row (op_power_w). */
void report_device_tables(const ss_solver *sv, report_line_fn fn, void *ctx)
{
    double vt = analysis_vt(sv);
    double *scratch = op_power_begin(sv);
    for (int k = 0; k < device_count(); k++) {
        const dev_ops *ops = device_at(k);
        if (!ops->report_line)
            continue;
        int any = 0;
        for (int i = 0; i < sv->n_elem; i++) {
            const element *el = &sv->elem[i];
            if (el->ops != ops)
                continue;
            char line[512];
            ops->report_line(el, sv->x_op, vt, sv->ckt->opt.gmin,
                             op_power_w(sv, el, sv->x_op, scratch), line, sizeof line);
            fn(ctx, any++ ? NULL : ops->report_heading, line);
        }
    }
}

static void print_device_line(void *ctx, const char *heading, const char *line)
{
    FILE *f = ctx;
    if (heading)
        fputs(heading, f);
    fprintf(f, "%s\n", line);
}

void ss_report_write(const ss_solver *sv, const ss_table *summary, FILE *f)
{
    fprintf(f, "%s\n", sv->ckt->title && sv->ckt->title[0] ? sv->ckt->title : "(untitled netlist)");
    fprintf(f, "temperature %.2f C\n", sv->temp_c);
    if (!sv->have_op && !summary)
        return;
    if (sv->have_op) {
        fprintf(f, "\nNode voltages\n");
        /* a board of thousands of nodes would bury the rest of the report: the first
         * REPORT_MAX_NODES unless nodes were named (op.csv always has every one) */
        int n_out = solver_n_out_nodes(sv);
        int shown = sv->out_nodes || n_out <= REPORT_MAX_NODES ? n_out : REPORT_MAX_NODES;
        for (int j = 0; j < shown; j++) {
            int node = solver_out_node(sv, j);
            fprintf(f, "  %-20s %12.6f V\n", sv->node_name[node], sv->x_op[node - 1]);
        }
        if (shown < n_out)
            fprintf(f, "  ... and %d more (all in op.csv; --nodes names the ones to show)\n",
                    n_out - shown);
        report_device_tables(sv, print_device_line, f);
    }
    if (summary && sv->stage.in)
        report_stage(sv, summary, f);
    for (int i = 0; i < sv->n_warnings; i++)
        fprintf(f, "warning: %s\n", sv->warnings[i]);
}
