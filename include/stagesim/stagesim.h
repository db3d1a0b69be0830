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

/* Names the stage's driving source and output node on a context (overrides a .stage line).
 * Returns SS_ERR_INPUT when the source or node does not exist. */
SS_API ss_status ss_solver_set_stage(ss_solver *sv, const char *in_source, const char *out_node,
                                     ss_error *err);
/* The stage's load in ohm (overrides .stage load=): positive and finite, else SS_ERR_INPUT. */
SS_API ss_status ss_solver_set_load(ss_solver *sv, double load_ohm, ss_error *err);

SS_API double ss_circuit_temp_c(const ss_circuit *ckt);

/* Names the nodes whose per-node results are written: the node-voltage rows of the operating
 * point table and the report, and the columns of the DC, AC and transient tables, in the order
 * given. n = 0 (or names NULL) goes back to every netlist node, the default. A name twice is
 * kept once. SS_ERR_INPUT names a node the circuit does not have. */
SS_API ss_status ss_solver_select_nodes(ss_solver *sv, const char *const *names, int n,
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

/* Stage figures over the .ac frequencies: out_stage (freq_hz, gain, gain_db, phase_deg,
 * zin_ohm, zout_ohm) and out_summary (metric,value). Corners are refined by extra solves. */
SS_API ss_status ss_stage_run(ss_solver *sv, ss_table **out_stage, ss_table **out_summary,
                              ss_error *err);
/* The same, the stage rows into a sink (sent once every figure is found) and the summary, when
 * out_summary is not NULL, into *out_summary (the caller's; written on success only). */
SS_API ss_status ss_stage_emit(ss_solver *sv, ss_sink *sink, ss_table **out_summary,
                               ss_error *err);

/* Names the noise analysis's output node and input source (overrides a .noise line) and,
 * optionally, the resistor whose thermal noise is the noise figure's reference (rs_resistor
 * NULL: the resistor in series with a V source / across an I source, when there is exactly
 * one -- docs/noise.md). Returns SS_ERR_INPUT naming what does not exist. */
SS_API ss_status ss_solver_set_noise(ss_solver *sv, const char *out_node,
                                      const char *in_source, const char *rs_resistor,
                                      ss_error *err);

/* Noise analysis over the .ac frequencies at the operating point (solved first if needed),
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

/* The stage's large-signal test on a context (each overrides its .large_signal setting and
 * turns the test on): the signal frequency (positive; default 1 kHz), the input amplitude THD is
 * computed at (V for a voltage source, A for a current source; positive; none by default) and
 * the THD in percent whose input amplitude is searched for (above 0, below 100; default 1 %).
 * SS_ERR_INPUT for a value outside its range. */
SS_API ss_status ss_solver_set_test_frequency(ss_solver *sv, double freq_hz, ss_error *err);
SS_API ss_status ss_solver_set_test_amplitude(ss_solver *sv, double amplitude, ss_error *err);
SS_API ss_status ss_solver_set_thd_target(ss_solver *sv, double thd_target_pct, ss_error *err);
/* The large-signal test in force, defaults applied: frequency (Hz), amplitude (0 when none is
 * named) and THD target (percent). Any output may be NULL. */
SS_API void ss_solver_large_signal(const ss_solver *sv, double *freq_hz, double *amplitude,
                                    double *thd_target_pct);

/* THD of the stage: its source driven by amplitude * sin(2 pi freq_hz t) around its DC value
 * (every other source at its DC value), run until the THD's estimated error from the distance
 * to the periodic steady state is within 1e-4 of it (docs/transient.md), then the first 10
 * harmonics of v(out) from a DFT over one whole period sampled at 256 points;
 * THD = sqrt(A2^2 + ... + A10^2) / A1, in percent.
 * Outputs (owned by the caller, written on success only; each may be NULL if not wanted):
 *   out_thd_pct   the THD in percent
 *   out_harmonics harmonic, freq_hz, amplitude_v, relative_pct (of A1), phase_deg (of a sine)
 *   out_wave      time_s, in(SOURCE) (its value: V or A), v(OUT): the last 3 periods
 * Returns SS_OK, SS_ERR_INPUT (no stage, amplitude or frequency not positive),
 * SS_ERR_NO_CONVERGENCE, SS_ERR_SINGULAR, SS_ERR_NOMEM. */
SS_API ss_status ss_stage_thd(ss_solver *sv, double amplitude, double freq_hz,
                              double *out_thd_pct, ss_table **out_harmonics, ss_table **out_wave,
                              ss_error *err);

/* The input amplitude at which the stage's THD at freq_hz reaches thd_target_pct (bracketing,
 * then regula falsi on log amplitude against log THD, to 0.1 % of the target). Returns SS_OK,
 * SS_ERR_INPUT, SS_ERR_NO_CONVERGENCE (also: the target is not reached below clipping),
 * SS_ERR_SINGULAR, SS_ERR_NOMEM. */
SS_API ss_status ss_stage_amplitude_at_thd(ss_solver *sv, double thd_target_pct,
                                           double freq_hz, double *out_amplitude, ss_error *err);

/* Output swing at the onset of clipping, both polarities: from the stage's quasi-static
 * transfer (its source's DC value swept with every capacitor the signal frequency sees as a
 * short held at its operating-point voltage), the output excursion from the bias where the
 * slope dV(out)/dV(in) has fallen to 90 % of its value at the bias; then confirmed by a
 * transient at the signal frequency with the input amplitude of each onset.
 * Output *out_summary (metric,value): ls_freq_hz, qs_gain, swing_pos_v, swing_neg_v,
 * vin_at_swing_pos_v, vin_at_swing_neg_v (iin_..._a for a current source), swing_pos_tran_v,
 * swing_neg_tran_v; a polarity that does not clip within four times the largest node voltage
 * is written empty. Returns as ss_stage_thd. */
SS_API ss_status ss_stage_clipping(ss_solver *sv, ss_table **out_summary, ss_error *err);

/* Every large-signal figure in one metric,value table: ss_stage_clipping's rows, then thd_pct
 * (at the .large_signal amplitude; empty without one) and thd_err_pct (its estimated error
 * from the distance to the periodic steady state, percentage points; empty when unknown),
 * thd_target_pct and vin_at_thd_v (iin_at_thd_a for a current source). Returns as
 * ss_stage_thd. */
SS_API ss_status ss_stage_large_signal(ss_solver *sv, ss_table **out_summary, ss_error *err);
/* The same table's labelled rows into a sink, once every figure is found. */
SS_API ss_status ss_stage_large_signal_emit(ss_solver *sv, ss_sink *sink, ss_error *err);

/* Writes a waveform plot (input above, output below, over a shared time axis) from a table
 * whose first column is time_s: in_col and out_col name its columns (NULL: "in(SOURCE)" or
 * else v(+ node of the stage source), and v(OUT) of the stage). Atomic. Returns SS_OK,
 * SS_ERR_INPUT (no such column, fewer than 2 points), SS_ERR_IO, SS_ERR_NOMEM. */
SS_API ss_status ss_plot_write_wave(const ss_solver *sv, const ss_table *wave,
                                    const char *in_col, const char *out_col, const char *path,
                                    ss_error *err);

/* Writes bode.svg-style plot (gain and phase over log frequency, corners marked) from the
 * tables of ss_stage_run, atomically. Returns SS_OK, SS_ERR_INPUT (fewer than 2 points),
 * SS_ERR_IO, SS_ERR_NOMEM. */
SS_API ss_status ss_plot_write_bode(const ss_solver *sv, const ss_table *stage,
                                    const ss_table *summary, const char *path, ss_error *err);

/* Writes the human-readable report to f: title, temperature, node voltages, per-BJT and
 * per-diode tables, the stage block (summary may be NULL) and the circuit's warnings
 * (docs/cli.md). */
SS_API void ss_report_write(const ss_solver *sv, const ss_table *summary, FILE *f);

/* The value of NAME in the circuit as parsed (ss_solver_get_value: a context's present one),
 * as --set understands it: a .param, an element's main value or MODEL.PARAM. Returns SS_ERR_INPUT naming NAME when there is no such thing. */
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

/* ---- limits and checks ------------------------------------------------------------------- */

/* A set of limits on figures: `QUANTITY [@ FREQ] RELATION` per line, see docs/checks.md. */
typedef struct ss_limits ss_limits;

SS_API ss_status ss_limits_create(ss_limits **out, ss_error *err);
/* Adds the limits of a limits file / of text / of a circuit's .expect lines. */
SS_API ss_status ss_limits_add_file(ss_limits *l, const char *path, ss_error *err);
SS_API ss_status ss_limits_add_text(ss_limits *l, const char *text, const char *name,
                                    ss_error *err);
SS_API ss_status ss_limits_add_circuit(ss_limits *l, const ss_circuit *ckt, ss_error *err);
SS_API int ss_limits_count(const ss_limits *l);
SS_API void ss_limits_destroy(ss_limits **l);

/* Every figure of the circuit in one labelled table (metric,value): the op.csv quantities, the
 * stage summary (when the netlist has .ac and a stage) and each QUANTITY@FREQ the limits name
 * (solved at that frequency, not interpolated). limits may be NULL. */
SS_API ss_status ss_figures_compute(ss_solver *sv, const ss_limits *limits,
                                    ss_table **out_figures, ss_error *err);

/* Checks, without solving anything, that every limit names a figure ss_figures_compute will
 * give for this circuit: an op.csv quantity (v(NODE) of a written node, i(V) per V source,
 * ic/ib/vbe/vce/gm(Q) per BJT, id(D) per diode), a stage summary metric (with .ac and a
 * stage), a noise figure (with .noise and .ac), a large-signal figure of the stage's source
 * kind (with a stage) or QUANTITY@FREQ (with a stage). Call it after the stage is named and
 * before the first solve, so a misspelt limit costs no solving. limits may be NULL.
 * Returns SS_OK, SS_ERR_INPUT at the first limit naming no figure (with its file and line:
 * "limit on 'QUANTITY': no such figure (why)"), SS_ERR_NOMEM. */
SS_API ss_status ss_limits_check_names(const ss_limits *limits, const ss_solver *sv,
                                       ss_error *err);

/* Judges figures against limits. Output: a table labelled by quantity with columns measured,
 * lower, upper, margin (distance to the nearest bound; negative when failing), pass (1/0);
 * *n_failed the number failing. A limit on a figure not computed is SS_ERR_INPUT. */
SS_API ss_status ss_check_evaluate(const ss_limits *l, const ss_table *figures,
                                   ss_table **out_verdicts, int *n_failed, ss_error *err);

/* Writes verdicts as a JUnit-style XML report (one testsuite, one testcase per limit). */
SS_API ss_status ss_check_write_junit(const ss_table *verdicts, const char *suite_name,
                                      const char *path, ss_error *err);
/* The same plus, after the limits, one failing testcase per lint warning of lint_sv (after
 * ss_lint_run; see ss_solver_warning_lint): what `check --strict` writes. lint_sv NULL:
 * exactly ss_check_write_junit. */
SS_API ss_status ss_check_write_junit_strict(const ss_table *verdicts, const ss_solver *lint_sv,
                                             const char *suite_name, const char *path,
                                             ss_error *err);

/* ---- studies: sweeps and tolerance (Monte Carlo) runs ------------------------------------ */

/* A study re-solves one netlist at many points: a grid of swept values (--vary) and/or random
 * trials over declared tolerances. The netlist is parsed once; each worker thread sets every
 * point's values by name on its own solver context (as --set names them), so parameters and
 * expressions follow; results depend only on the seed and the point index, never on the number
 * of threads or on sharding. */
typedef struct ss_study ss_study;
typedef void (*ss_progress_fn)(void *ctx, long done, long total);

/* Parses the nominal circuit (checking it) and keeps its .tolerance lines. */
SS_API ss_status ss_study_create(const char *netlist_path, const ss_override *sets, int n_sets,
                                 ss_study **out, ss_error *err);
SS_API ss_status ss_study_set_stage(ss_study *s, const char *in_source, const char *out_node,
                                    ss_error *err);
/* `NAME=lin:START:STOP:N`, `NAME=log:START:STOP:N` or `NAME=list:V1,V2,...`, every field
 * present and read whole by ss_value_parse; NAME as for --set, or `temp` (degrees C, each value
 * within -273.15 .. 1000). Several combine as a grid (the first varies slowest). A NAME the
 * study was created with a --set of is SS_ERR_INPUT: the swept value would replace it. */
SS_API ss_status ss_study_add_vary(ss_study *s, const char *spec, ss_error *err);
/* `NAME=5%` (uniform within +-5 % of nominal), `NAME=5%:gauss` (gaussian, 5 % = 3 sigma),
 * `NAME=LO..HI` or `NAME=LO..HI:gauss` (mean the middle, half-range = 3 sigma); numbers as
 * ss_value_parse reads them. The nominal is the value after the study's --set overrides, so
 * a tolerance on a --set name spreads around the --set value. */
SS_API ss_status ss_study_add_tolerance(ss_study *s, const char *spec, ss_error *err);
/* Monte Carlo: trials > 0 random trials per grid point from seed. */
SS_API ss_status ss_study_set_trials(ss_study *s, long trials, unsigned long long seed,
                                     ss_error *err);
/* Worker threads for ss_study_run: 1 .. 256 (ss_cpu_count() for every core; the default). The
 * results do not depend on it. SS_ERR_INPUT outside that range. */
SS_API ss_status ss_study_set_threads(ss_study *s, int n_threads, ss_error *err);
/* The processors online (at least 1). */
SS_API int ss_cpu_count(void);
/* Runs only the k-th (1-based) of n contiguous slices of the points. */
SS_API ss_status ss_study_set_shard(ss_study *s, int k, int n, ss_error *err);
/* Adds limits (copied; file names must outlive the study) to the netlist's own .expect lines;
 * ss_study_limits gives the combined set (for ss_study_summarize). */
SS_API ss_status ss_study_add_limits(ss_study *s, const ss_limits *limits, ss_error *err);
SS_API const ss_limits *ss_study_limits(const ss_study *s);
SS_API void ss_study_set_progress(ss_study *s, ss_progress_fn fn, void *ctx);
SS_API long ss_study_points(const ss_study *s);
/* Output: one row per point of this shard: point, swept and sampled values, status (0 ok, else
 * the exit-code class of the failure), then every figure of the nominal run. Before any point
 * is solved: SS_ERR_INPUT for a limit naming no figure (ss_limits_check_names) and, with
 * trials, for a name both swept and toleranced. */
SS_API ss_status ss_study_run(ss_study *s, ss_table **out_points, ss_error *err);
SS_API void ss_study_destroy(ss_study **s);

/* Statistics of a points table: per figure n, min, max, mean, std (sample), and, for figures
 * with limits, the fraction of points passing; a row `all_limits` holds the yield. */
SS_API ss_status ss_study_summarize(const ss_table *points, const ss_limits *limits,
                                    ss_table **out_summary, ss_error *err);

/* Normalised sensitivities (dF/F)/(dx/x) of every figure to every toleranced or listed value,
 * by central differences of +-1 %: a table labelled by figure, one column per value. The
 * limits' names are checked first (ss_limits_check_names). */
SS_API ss_status ss_study_sensitivity(ss_study *s, ss_table **out_sens, ss_error *err);

/* Operating point at the beta extremes (every BJT model's BF at its tolerance limits, else
 * halved and doubled; the corner value replaces a --set of BF) and at two temperatures
 * (-273.15 < temp_lo_c < temp_hi_c <= 1000, else SS_ERR_INPUT): one row per BJT and corner with
 * temp_c, beta_corner (-1 low, +1 high), ic_a, vce_v, forward_active (1/0, empty if
 * unsolved). */
SS_API ss_status ss_study_corners(ss_study *s, double temp_lo_c, double temp_hi_c,
                                  ss_table **out_corners, ss_error *err);

/* Snaps every element whose letter is in kinds ("r", "rc") to the nearest value of series
 * E12/E24/E96 (an element given with --set from its --set value) and solves again; the
 * limits' names are checked first. Outputs: per element value, preferred, change_pct; per
 * figure computed, preferred, shift, shift_pct. */
SS_API ss_status ss_study_snap(ss_study *s, int series, const char *kinds,
                               ss_table **out_values, ss_table **out_figures, ss_error *err);

/* Reads a CSV written by ss_table_write_csv back (for merging shards). */
SS_API ss_status ss_table_read_csv(const char *path, ss_table **out, ss_error *err);
/* Concatenates study shards and sorts them by point; the header must match and every point
 * appear once. The result written with ss_table_write_csv equals the unsharded run's file. */
SS_API ss_status ss_study_merge(ss_table *const *shards, int n_shards, ss_table **out_points,
                                ss_error *err);

/* ---- preferred values ------------------------------------------------------------------ */

/* Nearest value of an IEC 60063 series (12, 24 or 96 values per decade) to value (> 0). */
SS_API ss_status ss_eseries_nearest(int series, double value, double *out_value, ss_error *err);

/* ---- output sets: the files of one run, committed together (docs/cli.md) ---------------- */

/* A run's output files appear together or not at all: each is written under a hidden staging
 * name beside its final one and renamed at commit; run_manifest.csv in the set's folder then
 * names the run (the rows noted), and every file of the set with its SHA-256. */
typedef struct ss_outset ss_outset;

/* Starts the output set of a run writing into the folder dir (which must exist; NULL: a set of
 * files anywhere, staged and committed together, with no folder, lock or manifest). Takes the
 * folder's lock (the file .stagesim.lock in it, removed when the set is destroyed, released by
 * the system if the process dies): a second run writing into the same folder meanwhile gets
 * SS_ERR_INPUT naming the folder. Output *out, the caller's (ss_outset_destroy), written on
 * success. Returns SS_OK, SS_ERR_INPUT, SS_ERR_IO (no such folder, not writable),
 * SS_ERR_NOMEM. */
SS_API ss_status ss_outset_open(const char *dir, ss_outset **out, ss_error *err);

/* Reserves an output file: path is where it must end up (in the set's folder or anywhere
 * else, e.g. a JUnit report); what names it in messages ("op.csv", "--junit"). Output
 * *out_staged: the name to write it to now (owned by the set, valid until it is destroyed).
 * Checked here, before any work: the folder exists and is writable, path is not a folder, not
 * the manifest or lock of the set, and no other file of the set is the same file (SS_ERR_INPUT
 * naming both). A reserved file that is never written is not part of the set. */
SS_API ss_status ss_outset_add(ss_outset *s, const char *path, const char *what,
                               const char **out_staged, ss_error *err);

/* Adds a key,value row to the manifest (the command, its inputs, its options). Copied. */
SS_API ss_status ss_outset_note(ss_outset *s, const char *key, const char *value,
                                ss_error *err);

/* Notes the netlist a circuit was read from and input_sha256(PATH),HEX for it and every
 * .include (ss_circuit_input). */
SS_API ss_status ss_outset_note_circuit(ss_outset *s, const ss_circuit *ckt, ss_error *err);

/* Makes the set visible: removes the folder's old manifest, renames every written file over
 * its final name, removes the files the old manifest listed in the folder that this run did
 * not write (they belong to an earlier run), and writes run_manifest.csv last: the noted rows,
 * then file_sha256(NAME),HEX per file. Returns SS_OK, SS_ERR_IO, SS_ERR_NOMEM. */
SS_API ss_status ss_outset_commit(ss_outset *s, ss_error *err);

/* Releases the lock; the staged files of a set not committed are removed. Accepts NULL. */
SS_API void ss_outset_destroy(ss_outset **s);

/* Removes every temporary and staged file the library has open: what a SIGINT or SIGTERM
 * handler calls before the process ends. Async-signal-safe (no lock, no allocation). */
SS_API void ss_output_remove_temporaries(void);

/* SHA-256 (FIPS PUB 180-4) of len bytes as 64 lower-case hexadecimal digits and a NUL. */
SS_API void ss_sha256_hex(const void *data, size_t len, char out_hex[65]);

/* The files the circuit was read from: the netlist file (not a text given to
 * ss_circuit_parse_text), then every .include in the order read, each with the SHA-256 of the
 * bytes parsed (*out_sha256, 64 hex digits; may be NULL). NULL past the end. */
SS_API const char *ss_circuit_input(const ss_circuit *ckt, int index, const char **out_sha256);

/* Notes the identity of a study in an output set: the command ("sweep" or "spread"), the
 * netlist and the SHA-256 of every input and of the limits, the swept and sampled names with
 * their values, seed, trial count, points, this shard (K/N and its point range) and
 * study_id -- a SHA-256 over everything that determines the points' values, the same for every
 * shard of one study and for no other. */
SS_API ss_status ss_study_note_identity(const ss_study *s, const char *command, ss_outset *set,
                                        ss_error *err);

/* Merges shards of one study: paths are study.csv files as spread or sweep wrote them, each
 * with the run_manifest.csv its run wrote beside it. Refused (SS_ERR_INPUT, naming the file):
 * a file without a manifest, a file whose bytes are not those its run wrote (cut short,
 * edited), a shard of another study (study_id), a shard given twice, a missing shard of the
 * N, a table that does not hold exactly its shard's points. Output *out_points: the points of
 * every shard in order -- written with ss_table_write_csv, the very bytes of the unsharded
 * run. set (may be NULL): gets the study's identity rows, as one unsharded run notes them. */
SS_API ss_status ss_study_merge_files(const char *const *paths, int n, ss_outset *set,
                                      ss_table **out_points, ss_error *err);

/* ---- sanity warnings (lint) ------------------------------------------------------------- */

/* Runs the sanity checks of docs/cli.md on the circuit at its operating point (solved first when
 * there is none): SI suffixes that read as milli or femto, resistors outside 1 mohm .. 1 Tohm,
 * nodes with one connection, coupling or bypass capacitors below 1 pF, stage transistors not
 * in forward-active operation, currents above 1 kA. Each finding `.options lint_off=` leaves on
 * becomes a warning of the context ("FILE:LINE: NAME: ... [CHECK]", ss_solver_warning) that
 * ss_solver_warning_lint names; nothing else changes. Running it again adds
 * nothing. Output: *out_n (may be NULL), how many of the context's warnings are lint warnings.
 * Returns SS_OK, or as ss_op_solve when the operating point had to be solved. */
SS_API ss_status ss_lint_run(ss_solver *sv, int *out_n, ss_error *err);

/* The lint check that raised warning `index` ("one_connection"); NULL for any other warning or
 * past the end. *subject (subject may be NULL) gets the element or node the warning names. */
SS_API const char *ss_solver_warning_lint(const ss_solver *sv, int index,
                                           const char **subject);

#ifdef __cplusplus
}
#endif
#endif
