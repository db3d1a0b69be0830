/* stagesim: the core: status and errors, circuits, solver contexts, result tables, sinks, the
 * operating point, DC, AC, noise and transient analyses, the analysis table, sanity warnings
 * Part of the public API; include "stagesim/stagesim.h" for all of it (docs/api.md). */
#ifndef STAGESIM_CORE_H
#define STAGESIM_CORE_H

#include <stddef.h>
#include <stdio.h>

#if defined(__GNUC__)
#define SS_API __attribute__((visibility("default")))
#else
#define SS_API
#endif

#ifdef __cplusplus
extern "C" {
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

/* What stagesim prints: v in engineering notation, 4 significant digits and an SI prefix from
 * y to Y ("5.273 mW", "1.841 aA", "10.47" without a unit; "-" for NaN, "inf"), into buf of len
 * bytes; returns buf. */
SS_API const char *ss_format_eng(char *buf, size_t len, double v, const char *unit);
/* The unit of a figure by its name: an op.csv row by its quantity (v(..), vce(..): "V";
 * i(..), ic(..): "A"; gm(..): "S"; power(..): "W"), a summary metric by its suffix (_hz "Hz",
 * _ohm "ohm", _db "dB", _deg "deg", _pct "%", _v "V", _a "A"); "" for a ratio (gain) or an
 * unknown name. abs(...) and "@FREQ" are looked through. Never NULL. */
SS_API const char *ss_figure_unit(const char *name);
/* A figure's value as printed: ss_format_eng with the figure's unit; dB, degrees and
 * percentages without an SI prefix ("20.4 dB"). Returns buf. */
SS_API const char *ss_format_figure(char *buf, size_t len, double v, const char *name);
/* Opt-in: hands SuiteSparse (KLU) the library's large-block allocation (whole huge pages for
 * the LU factors of big circuits), once per process and only when the process has not set
 * SuiteSparse's memory functions itself. It changes a process-wide setting, so the library
 * never calls it on its own; the command-line tool does, at start. */
SS_API void ss_klu_use_library_memory(void);

/* Reads one number as netlist values are written, for option values: decimal digits
 * ([+-]D[.D][e[+-]D]) and an optional SI suffix (t g meg k m u n p f mil, any case: m is milli,
 * meg mega), nothing after it -- no unit letters, no hex, no inf or nan. A lone capital M
 * ("1M") is refused as ambiguous. Returns SS_OK with *out_value (finite) or SS_ERR_INPUT with
 * err saying why, quoting the text. */
SS_API ss_status ss_value_parse(const char *text, double *out_value, ss_error *err);

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
 * Inputs: path; overrides[n_overrides] (may be NULL when n_overrides is 0), each NAME once:
 * a NAME given twice (in any case) is SS_ERR_INPUT ("--set NAME: set twice ...").
 * Output: *out_ckt, owned by the caller (ss_circuit_destroy), written on success only.
 * Returns SS_OK, SS_ERR_INPUT, SS_ERR_IO, SS_ERR_NOMEM or SS_ERR_LIMIT with err filled. */
SS_API ss_status ss_circuit_parse_file(const char *path, const ss_override *overrides,
                                       int n_overrides, ss_circuit **out_ckt, ss_error *err);

/* As ss_circuit_parse_file, with folders for model files: a relative .include path not found
 * beside the file that includes it is looked for in model_dirs[0], [1], ... in order (the
 * first that has it wins); when none has it the error names every folder tried. The CLI
 * passes --models, then STAGESIM_MODELS, then the installed models folder (docs/netlist.md). */
SS_API ss_status ss_circuit_parse_file_models(const char *path, const ss_override *overrides,
                                              int n_overrides, const char *const *model_dirs,
                                              int n_model_dirs, ss_circuit **out_ckt,
                                              ss_error *err);

/* As ss_circuit_parse_file, from text in memory; `name` stands for the file name in errors,
 * and relative .include paths resolve against the current directory. */
SS_API ss_status ss_circuit_parse_text(const char *text, size_t text_len, const char *name,
                                       const ss_override *overrides, int n_overrides,
                                       ss_circuit **out_ckt, ss_error *err);

/* Frees the circuit and everything it owns; accepts NULL and nulls the handle. */
SS_API void ss_circuit_destroy(ss_circuit **ckt);

/* ---- solver contexts --------------------------------------------------------------------- */

/* A solver context: made from a parsed circuit (which it reads, never writes, and which must
 * outlive it), it owns everything that changes while solving -- the current values of
 * parameters, elements and model parameters, the temperature, the stage, noise and large-signal
 * requests, the matrix and the operating point. Several contexts of one circuit may run in
 * parallel threads, one thread per context. */
typedef struct ss_solver ss_solver;
SS_API ss_status ss_solver_create(const ss_circuit *ckt, ss_solver **out, ss_error *err);
/* Frees the context; accepts NULL and nulls the handle. */
SS_API void ss_solver_destroy(ss_solver **sv);
SS_API const ss_circuit *ss_solver_circuit(const ss_solver *sv);
/* Sets a value by name, as --set names it: a global .param (whatever is written in its terms
 * follows at the next analysis), an element's main value (R1) or a model parameter (QN.BF).
 * SS_ERR_INPUT for a name the circuit does not have; a value outside the element's or
 * parameter's range is refused by the next analysis, naming it. A value an analysis setting,
 * option or waveform is written in terms of cannot change (the analysis says which). */
SS_API ss_status ss_solver_set_value(ss_solver *sv, const char *name, double value,
                                     ss_error *err);
/* The current value of a name as ss_solver_set_value takes it. */
SS_API ss_status ss_solver_get_value(ss_solver *sv, const char *name, double *out_value,
                                     ss_error *err);
/* Every value and the temperature back to the circuit's own. */
SS_API void ss_solver_reset_values(ss_solver *sv);
/* Sets the context's temperature (overrides .temp); applied at the next solve. SS_ERR_INPUT
 * when it is outside -273.15 .. 1000 C, or when a model's parameters scaled to it are not
 * finite or leave their range (the error names the model card, the parameter and its value). */
SS_API ss_status ss_solver_set_temp(ss_solver *sv, double temp_c, ss_error *err);
SS_API double ss_solver_temp_c(const ss_solver *sv);
/* The warnings: the circuit's, then what the analyses run on this context raised. NULL past
 * the last. */
SS_API const char *ss_solver_warning(const ss_solver *sv, int index);

/* What the netlist asks for. */
typedef struct ss_analysis_flags {
    int op;    /* .op (an operating point is always solved before other analyses) */
    int dc;    /* .dc */
    int ac;    /* .ac */
    int stage; /* .stage, or a stage named with ss_solver_set_stage */
    int tran;  /* .tran */
    int noise; /* .noise, or a noise analysis named with ss_solver_set_noise */
    int large_signal; /* .large_signal, or a ss_solver_set_test_... call */
} ss_analysis_flags;
SS_API void ss_circuit_analyses(const ss_circuit *ckt, ss_analysis_flags *out_flags);
/* The same for a context, with the stage, noise and large-signal requests set on it. */
SS_API void ss_solver_analyses(const ss_solver *sv, ss_analysis_flags *out_flags);

SS_API double ss_circuit_temp_c(const ss_circuit *ckt);

/* Names the nodes whose per-node results are written: the node-voltage rows of the operating
 * point table and the report, and the columns of the DC, AC and transient tables, in the order
 * given. n = 0 (or names NULL) goes back to every netlist node, the default. A name twice is
 * kept once. SS_ERR_INPUT names a node the circuit does not have. */
SS_API ss_status ss_solver_select_nodes(ss_solver *sv, const char *const *names, int n,
                                         ss_error *err);
/* Names the elements whose DC quantities join the DC sweep's table: after the node columns,
 * each element's operating-point rows (op.csv's names: ic(q1), ib(q1), vbe(q1), vce(q1),
 * gm(q1), then power(q1)) at every sweep point, in the order given. n = 0 (or names NULL): none,
 * the default. A name twice is kept once. SS_ERR_INPUT names an element the circuit does not
 * have or one without such rows (a capacitor, an inductor). */
SS_API ss_status ss_solver_select_devices(ss_solver *sv, const char *const *names, int n,
                                           ss_error *err);

/* ---- result tables ----------------------------------------------------------------------- */

/* A table of doubles with named columns and, optionally, a text label per row (op.csv's
 * `quantity` column). An empty cell (a corner not found) is stored as NaN and written empty. */
typedef struct ss_table ss_table;

SS_API int ss_table_rows(const ss_table *t);
SS_API int ss_table_cols(const ss_table *t);
SS_API const char *ss_table_col_name(const ss_table *t, int col);
/* The index of the column called name (the first, should two share it); -1 when there is
 * none. Read results by name: columns may be added to a table, never renamed. */
SS_API int ss_table_col_index(const ss_table *t, const char *name);
/* NULL when the table has no row labels. */
SS_API const char *ss_table_row_label(const ss_table *t, int row);
SS_API double ss_table_get(const ss_table *t, int row, int col);
/* The value of the row labelled `label` in column `col`; NaN when absent. */
SS_API double ss_table_lookup(const ss_table *t, const char *label, int col);
/* Every value of the table, row by row (rows x cols), copied into out (room for n): the count
 * copied, or -1 when n is too small (nothing copied). An empty cell is NaN. */
SS_API long ss_table_values(const ss_table *t, double *out, long n);
SS_API void ss_table_destroy(ss_table **t);

/* Writes the table as CSV (RFC 4180 quoting, LF line ends, each number in the fewest
 * significant digits that read back as the same double; docs/cli.md) atomically: into a
 * temporary file in the same folder, then renamed into place. */
SS_API ss_status ss_table_write_csv(const ss_table *t, const char *path, ss_error *err);

/* ---- analyses ---------------------------------------------------------------------------- */

/* ---- sinks: where an analysis's rows go ---------------------------------------------------- */

/* A sink takes an analysis's rows as it makes them: into a table (ss_sink_table), into a CSV
 * file written while the analysis runs (ss_sink_csv), to the caller's functions
 * (ss_sink_create) or to two sinks at once (ss_sink_tee). One sink serves one analysis run at a
 * time. Some tables label their rows (op.csv's quantity column, a metric,value summary). */
typedef struct ss_sink ss_sink;
typedef struct ss_sink_callbacks {
    /* once: the column names (valid during the call) and how many rows come (0 unknown) */
    int (*begin)(void *ctx, int n_cols, const char *const *names, long n_rows_hint);
    /* per row: n_cols values (valid during the call) */
    int (*row)(void *ctx, const double *values, int n_cols);
    /* once at the end: ok 1 when the analysis succeeded (else it stopped with an error) */
    int (*end)(void *ctx, int ok);
    /* labelled tables only, just before each row: the label column's header ("quantity") and
     * the row's label ("v(out)"), both valid during the call */
    int (*label)(void *ctx, const char *label_col, const char *label);
} ss_sink_callbacks; /* each may be NULL; a nonzero return stops the analysis (SS_ERR_IO) */
SS_API ss_status ss_sink_create(const ss_sink_callbacks *cb, void *ctx, ss_sink **out,
                                ss_error *err);
SS_API ss_status ss_sink_table(ss_sink **out, ss_error *err);
/* The table a table sink collected (the caller's to destroy); NULL for any other sink or when
 * the analysis failed. */
SS_API ss_table *ss_sink_take_table(ss_sink *sink);
/* The CSV file `path`, written row by row as the analysis runs (a second thread formats the
 * text of large sweeps), replaced atomically when the analysis succeeds, left alone otherwise. */
SS_API ss_status ss_sink_csv(const char *path, ss_sink **out, ss_error *err);
/* Every row to a, then to b (neither owned: destroy them after the tee); both are ended, the
 * second told of the first's failure, and the first error is returned. A table sink beside a
 * CSV sink keeps in memory the rows a file gets. */
SS_API ss_status ss_sink_tee(ss_sink *a, ss_sink *b, ss_sink **out, ss_error *err);
SS_API void ss_sink_destroy(ss_sink **sink);

typedef struct ss_op_stats {
    int newton_iterations; /* total, fallbacks included */
    int gmin_steps;        /* 0 when plain Newton converged */
    int source_steps;      /* 0 when no source stepping was needed */
} ss_op_stats;

/* Solves the DC operating point and keeps it in the circuit (later analyses linearise there).
 * Output: *out_op (the quantity,value rows of op.csv, docs/cli.md), optional; stats optional.
 * Returns SS_OK, SS_ERR_SINGULAR, SS_ERR_NO_CONVERGENCE, SS_ERR_NOMEM. */
SS_API ss_status ss_op_solve(ss_solver *sv, ss_table **out_op, ss_op_stats *stats,
                             ss_error *err);
/* The same, the quantity,value rows into a sink (labelled rows) once the point is solved. */
SS_API ss_status ss_op_emit(ss_solver *sv, ss_sink *sink, ss_op_stats *stats, ss_error *err);

/* Runs the netlist's .dc sweep (each point starts from the previous solution). Output table:
 * the swept source(s), then v(NODE) per node. Leaves the circuit at its unswept values. */
SS_API ss_status ss_dc_sweep_run(ss_solver *sv, ss_table **out_dc, ss_error *err);
/* The same sweep, each point's row into a sink as it is solved. */
SS_API ss_status ss_dc_sweep_emit(ss_solver *sv, ss_sink *sink, ss_error *err);

/* Runs the .ac sweep at the present operating point (solves it first if needed).
 * Output: freq_hz, vm(NODE), vp(NODE) per node. */
SS_API ss_status ss_ac_sweep_run(ss_solver *sv, ss_table **out_ac, ss_error *err);
/* The AC sweep's rows (freq_hz, then vm(NODE), vp(NODE) per written node) into a sink. */
SS_API ss_status ss_ac_sweep_emit(ss_solver *sv, ss_sink *sink, ss_error *err);
/* The same sweep written straight to a CSV file (the very text ss_table_write_csv writes of
 * ss_ac_sweep_run's table), formatted on a second thread while the next frequency is solved
 * and never held whole in memory: what a board of many nodes needs. */
SS_API ss_status ss_ac_sweep_write(ss_solver *sv, const char *path, ss_error *err);

/* Names the noise analysis's output node and input source (overrides a .noise line) and,
 * optionally, the resistor whose thermal noise is the noise figure's reference (rs_resistor
 * NULL: the resistor in series with a V source / across an I source, when there is exactly
 * one -- docs/noise.md). Returns SS_ERR_INPUT naming what does not exist. */
SS_API ss_status ss_solver_set_noise(ss_solver *sv, const char *out_node,
                                      const char *in_source, const char *rs_resistor,
                                      ss_error *err);

/* Gives the noise analysis a band of its own, independent of .ac (overrides .noise band= and
 * per_decade=): the sweep then runs from lo_hz to hi_hz on a log grid of per_decade points a
 * decade (0: the .noise line's, else 100), integrated with Simpson's rule in ln f, and the
 * summary gains out_noise_band_rms_v, in_noise_band_rms_v and band_points (docs/noise.md).
 * lo_hz = hi_hz = 0 removes the band (the .ac frequencies again). Returns SS_ERR_INPUT for
 * 0 < lo < hi not holding, more than 15 decades or per_decade outside 2 .. 10000. */
SS_API ss_status ss_solver_set_noise_band(ss_solver *sv, double lo_hz, double hi_hz,
                                          int per_decade, ss_error *err);
/* The noise weighting (overrides .noise weight=): "a" the A-weighting of IEC 61672-1:2013,
 * "none" none. With "a" the summary gains out_noise_a_rms_v and in_noise_a_rms_v. Returns
 * SS_ERR_INPUT for another name. */
SS_API ss_status ss_solver_set_noise_weight(ss_solver *sv, const char *weight, ss_error *err);

/* The unit of the noise analysis's input-referred figures (in_noise_rms_v, in_noise_v_rthz, ...):
 * "A" when its input source is a current source, else "V" (also before any noise request).
 * Never NULL. */
SS_API const char *ss_solver_noise_input_unit(const ss_solver *sv);

/* Noise analysis over the .ac frequencies (or its own band) at the operating point (solved first if needed),
 * for the output node and input source of .noise (or ss_solver_set_noise); docs/noise.md.
 * Outputs (owned by the caller, written on success only; each may be NULL if not wanted):
 *   out_noise   freq_hz, out_noise_v_rthz, in_noise_v_rthz per frequency (noise.csv); the
 *               input-referred density is empty where the gain is 0
 *   out_summary metric,value: f_start_hz, f_stop_hz, out_noise_rms_v, in_noise_rms_v
 *               (integrated over the sweep), noise_figure_db and source_res_ohm (empty
 *               without a source resistor), temp_k
 *   out_contrib source,out_noise_rms_v,share_pct,element_share_pct: one row per noise source
 *               ("q1 collector shot"), elements ranked by their total, sources within each
 * Returns SS_OK, SS_ERR_INPUT (no noise analysis named, no .ac), SS_ERR_SINGULAR,
 * SS_ERR_NO_CONVERGENCE, SS_ERR_NOMEM, SS_ERR_LIMIT. */
SS_API ss_status ss_noise_run(ss_solver *sv, ss_table **out_noise, ss_table **out_summary,
                              ss_table **out_contrib, ss_error *err);
/* The same, the noise.csv rows into a sink frequency by frequency; summary and contributions
 * as above (each may be NULL). */
SS_API ss_status ss_noise_emit(ss_solver *sv, ss_sink *sink, ss_table **out_summary,
                               ss_table **out_contrib, ss_error *err);

/* ---- transient and the stage's large-signal figures (docs/transient.md) ------------------ */

/* Transient analysis of the netlist's .tran TSTEP TSTOP [TSTART]: from the operating point
 * with every time-varying source (SIN, PULSE, PWL) at its t = 0 value, trapezoidal
 * integration of the devices' charges (.options tran_method=gear2: second-order backward
 * differences) with local-truncation-error step control; the steps land exactly on every
 * output time TSTART + k TSTEP (no interpolation) and on every source corner.
 * Output: *out_tran (tran.csv: time_s, then v(NODE) per node), owned by the caller, written on
 * success only. Returns SS_OK, SS_ERR_INPUT (no .tran), SS_ERR_NO_CONVERGENCE (no operating
 * point at t = 0, or the step fell below its floor: the message names the time and the node),
 * SS_ERR_SINGULAR, SS_ERR_NOMEM, SS_ERR_LIMIT. */
SS_API ss_status ss_tran_run(ss_solver *sv, ss_table **out_tran, ss_error *err);
/* The same, each output point's row into a sink as it is reached. */
SS_API ss_status ss_tran_emit(ss_solver *sv, ss_sink *sink, ss_error *err);

/* The value of NAME in the circuit as parsed (ss_solver_get_value: a context's present one),
 * as --set understands it: a .param, an element's main value or MODEL.PARAM. Returns
 * SS_ERR_INPUT naming NAME when there is no such thing. */
SS_API ss_status ss_circuit_get_value(const ss_circuit *ckt, const char *name, double *out_value,
                                      ss_error *err);

/* ---- the analyses by name ---------------------------------------------------------------- */

/* Every analysis in one table, in the order `stagesim run` runs them ("op", "ac", "stage",
 * "dc", "tran", "large_signal", "noise"): i from 0 to ss_analysis_count() - 1. Name,
 * directive (".dc") and main output file ("dc.csv") are NULL for i out of range. */
SS_API int ss_analysis_count(void);
SS_API const char *ss_analysis_name(int i);
SS_API const char *ss_analysis_directive(int i);
SS_API const char *ss_analysis_output(int i);
/* 1 when the context asks for analysis i (its netlist's directives and the requests set on it:
 * ss_solver_analyses), as run decides: the operating point always, the stage only with an .ac
 * sweep, the large-signal figures only with a stage. 0 otherwise or out of range. */
SS_API int ss_analysis_wanted(const ss_solver *sv, int i);
/* Runs analysis i, its main table's rows into sink (the rows of its own emit function:
 * ss_op_emit, ss_ac_sweep_emit, ...; its summaries are not made). Returns as that function, or
 * SS_ERR_INPUT for i out of range. */
SS_API ss_status ss_analysis_emit(ss_solver *sv, int i, ss_sink *sink, ss_error *err);

/* The files the circuit was read from: the netlist file (not a text given to
 * ss_circuit_parse_text), then every .include in the order read, each with the SHA-256 of the
 * bytes parsed (*out_sha256, 64 hex digits; may be NULL). NULL past the end. */
SS_API const char *ss_circuit_input(const ss_circuit *ckt, int index, const char **out_sha256);

/* ---- sanity warnings (lint) ------------------------------------------------------------- */

/* Runs the sanity checks of docs/cli.md on the circuit at its operating point (solved first when
 * there is none): SI suffixes that read as milli or femto, resistors outside 1 mohm .. 1 Tohm,
 * nodes with one connection, coupling or bypass capacitors below 1 pF, stage transistors not
 * in forward-active operation, currents above 1 kA. Each finding `.options lint_off=` leaves on
 * becomes a warning of the context ("FILE:LINE: NAME: ... [CHECK]", ss_solver_warning) that
 * ss_solver_warning_lint names; nothing else changes. Running it again adds
 * nothing. Output: *out_n (may be NULL), how many of the context's warnings are lint warnings,
 * counting the parser's warnings that name a check (model_extras, docs/netlist.md) with them.
 * Returns SS_OK, or as ss_op_solve when the operating point had to be solved. */
SS_API ss_status ss_lint_run(ss_solver *sv, int *out_n, ss_error *err);

/* The lint check that raised warning `index` ("one_connection"), or the parser's check
 * ("model_extras"); NULL for any other warning or past the end. *subject (subject may be NULL) gets the element or node the warning names. */
SS_API const char *ss_solver_warning_lint(const ss_solver *sv, int index,
                                           const char **subject);

#ifdef __cplusplus
}
#endif
#endif
