/* stagesim public C API: parse a netlist, solve its operating point, sweeps and AC response,
 * and write the results. The command-line tool is a thin client of exactly this header. */
#ifndef STAGESIM_H
#define STAGESIM_H

#include <stddef.h>
#include <stdio.h>

#ifdef __cplusplus
extern "C" {
#endif

#if defined(__GNUC__)
#define SS_API __attribute__((visibility("default")))
#else
#define SS_API
#endif

/* ---- status and errors ------------------------------------------------------------------- */

typedef enum ss_status {
    SS_OK = 0,
    SS_ERR_INPUT,          /* bad netlist, value, option or usage */
    SS_ERR_IO,             /* a file could not be read or written */
    SS_ERR_NOMEM,          /* an allocation failed */
    SS_ERR_SINGULAR,       /* the circuit matrix is singular (floating node, source loop) */
    SS_ERR_NO_CONVERGENCE, /* Newton did not converge, fallbacks included */
    SS_ERR_LIMIT,          /* a documented resource limit was exceeded */
    SS_ERR_INTERNAL        /* a broken invariant of our own; please report */
} ss_status;

/* An error as detected: where (netlist file and line, when known) and what, naming the
 * element or node at fault. `line` is 0 when no netlist line applies. */
typedef struct ss_error {
    ss_status code;
    int line;
    char file[256];
    char message[768];
} ss_error;

/* Writes "FILE:LINE: message" (or "stagesim: message" with no location) into buf. */
SS_API void ss_error_format(const ss_error *err, char *buf, size_t buf_len);
SS_API const char *ss_status_name(ss_status code);
SS_API const char *ss_version(void);

/* ---- circuits ---------------------------------------------------------------------------- */

typedef struct ss_circuit ss_circuit;

/* A `--set NAME=VALUE` override. NAME is a .param name (the value replaces the netlist's
 * definition before anything is evaluated), an element name (`R1`, `X1.R2`: replaces the
 * element's main value) or `MODEL.PARAM` (`qgen.bf`: replaces a model parameter). VALUE is a
 * number with an optional SI suffix or a {expression}. */
typedef struct ss_override {
    const char *name;
    const char *value;
} ss_override;

/* Parses a netlist file (with its .include files) into a circuit.
 * Inputs: path; overrides[n_overrides] (may be NULL when n_overrides is 0).
 * Output: *out_ckt, owned by the caller (ss_circuit_destroy), written on success only.
 * Returns SS_OK, SS_ERR_INPUT, SS_ERR_IO, SS_ERR_NOMEM or SS_ERR_LIMIT with err filled. */
SS_API ss_status ss_circuit_parse_file(const char *path, const ss_override *overrides,
                                       int n_overrides, ss_circuit **out_ckt, ss_error *err);

/* As ss_circuit_parse_file, from text in memory; `name` stands for the file name in errors,
 * and relative .include paths resolve against the current directory. */
SS_API ss_status ss_circuit_parse_text(const char *text, size_t text_len, const char *name,
                                       const ss_override *overrides, int n_overrides,
                                       ss_circuit **out_ckt, ss_error *err);

/* Frees the circuit and everything it owns; accepts NULL and nulls the handle. */
SS_API void ss_circuit_destroy(ss_circuit **ckt);

/* What the netlist asks for. */
typedef struct ss_analysis_flags {
    int op;    /* .op (an operating point is always solved before other analyses) */
    int dc;    /* .dc */
    int ac;    /* .ac */
    int stage; /* .stage, or a stage named with ss_circuit_set_stage */
    int tran;  /* .tran (parsed; not computed in this version) */
    int noise; /* .noise (parsed; not computed in this version) */
} ss_analysis_flags;
SS_API void ss_circuit_analyses(const ss_circuit *ckt, ss_analysis_flags *out_flags);

/* Names the stage's driving source and output node (overrides a .stage line). load_ohm <= 0
 * means no load named. Returns SS_ERR_INPUT when the source or node does not exist. */
SS_API ss_status ss_circuit_set_stage(ss_circuit *ckt, const char *in_source,
                                      const char *out_node, double load_ohm, ss_error *err);

SS_API double ss_circuit_temp_c(const ss_circuit *ckt);

/* ---- result tables ----------------------------------------------------------------------- */

/* A table of doubles with named columns and, optionally, a text label per row (op.csv's
 * `quantity` column). An empty cell (a corner not found) is stored as NaN and written empty. */
typedef struct ss_table ss_table;

SS_API int ss_table_rows(const ss_table *t);
SS_API int ss_table_cols(const ss_table *t);
SS_API const char *ss_table_col_name(const ss_table *t, int col);
/* NULL when the table has no row labels. */
SS_API const char *ss_table_row_label(const ss_table *t, int row);
SS_API double ss_table_get(const ss_table *t, int row, int col);
/* The value of the row labelled `label` in column `col`; NaN when absent. */
SS_API double ss_table_lookup(const ss_table *t, const char *label, int col);
SS_API void ss_table_destroy(ss_table **t);

/* Writes the table as CSV (RFC 4180 quoting, LF line ends, the shortest of %.15g / %.17g that
 * reads back exactly) atomically: into a
 * temporary file in the same folder, then renamed into place. */
SS_API ss_status ss_table_write_csv(const ss_table *t, const char *path, ss_error *err);

/* ---- analyses ---------------------------------------------------------------------------- */

typedef struct ss_op_stats {
    int newton_iterations; /* total, fallbacks included */
    int gmin_steps;        /* 0 when plain Newton converged */
    int source_steps;      /* 0 when no source stepping was needed */
} ss_op_stats;

/* Solves the DC operating point and keeps it in the circuit (later analyses linearise there).
 * Output: *out_op (quantity,value rows per DESIGN's op.csv), optional; stats optional.
 * Returns SS_OK, SS_ERR_SINGULAR, SS_ERR_NO_CONVERGENCE, SS_ERR_NOMEM. */
SS_API ss_status ss_op_solve(ss_circuit *ckt, ss_table **out_op, ss_op_stats *stats,
                             ss_error *err);

/* Runs the netlist's .dc sweep (each point starts from the previous solution). Output table:
 * the swept source(s), then v(NODE) per node. Leaves the circuit at its unswept values. */
SS_API ss_status ss_dc_sweep_run(ss_circuit *ckt, ss_table **out_dc, ss_error *err);

/* Runs the .ac sweep at the present operating point (solves it first if needed).
 * Output: freq_hz, vm(NODE), vp(NODE) per node. */
SS_API ss_status ss_ac_sweep_run(ss_circuit *ckt, ss_table **out_ac, ss_error *err);

/* Stage figures over the .ac frequencies: out_stage (freq_hz, gain, gain_db, phase_deg,
 * zin_ohm, zout_ohm) and out_summary (metric,value). Corners are refined by extra solves. */
SS_API ss_status ss_stage_run(ss_circuit *ckt, ss_table **out_stage, ss_table **out_summary,
                              ss_error *err);

/* Writes bode.svg-style plot (gain and phase over log frequency, corners marked) from the
 * tables of ss_stage_run, atomically. Returns SS_OK, SS_ERR_INPUT (fewer than 2 points),
 * SS_ERR_IO, SS_ERR_NOMEM. */
SS_API ss_status ss_plot_write_bode(const ss_circuit *ckt, const ss_table *stage,
                                    const ss_table *summary, const char *path, ss_error *err);

/* Writes the human-readable report (operating point, per-BJT table, stage block) to f. */
SS_API void ss_report_write(const ss_circuit *ckt, const ss_table *summary, FILE *f);

/* Warnings gathered while parsing and solving (e.g. a near-singular matrix); NULL past the end. */
SS_API const char *ss_circuit_warning(const ss_circuit *ckt, int index);

#ifdef __cplusplus
}
#endif
#endif
