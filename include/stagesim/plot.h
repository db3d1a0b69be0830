/* stagesim: plots, the text report and output sets (the files of one run, committed together)
 * Part of the public API; include "stagesim/stagesim.h" for all of it (docs/api.md). */
#ifndef STAGESIM_PLOT_H
#define STAGESIM_PLOT_H

#include "stagesim/core.h"

#ifdef __cplusplus
extern "C" {
#endif

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

/* Writes noise.svg: the output and input-referred noise densities of a noise table (the rows
 * of ss_noise_run: freq_hz, out_noise_v_rthz, in_noise_v_rthz) over a log frequency axis and a
 * log density axis (V/rtHz; A/rtHz input-referred for a current-source input), decade grid
 * lines labelled, the polylines with ids out_noise and in_noise; empty and zero densities are
 * left out (docs/noise.md). Atomic. Returns SS_OK, SS_ERR_INPUT (no such columns, fewer than
 * 2 points, frequencies not ascending, nothing above zero), SS_ERR_IO, SS_ERR_NOMEM. */
SS_API ss_status ss_plot_write_noise(const ss_solver *sv, const ss_table *noise, const char *path,
                                     ss_error *err);

/* Writes the human-readable report to f: title, temperature, node voltages, per-BJT and
 * per-diode tables, the stage block (summary may be NULL) and the circuit's warnings
 * (docs/cli.md). */
SS_API void ss_report_write(const ss_solver *sv, const ss_table *summary, FILE *f);

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

/* ---- the HTML report: one self-contained page (docs/cli.md, "The HTML report") ---------- */

/* A page built section by section and written once: inline CSS, the plots as inline SVG, no
 * scripts, nothing fetched from elsewhere, valid UTF-8 with every name and title escaped
 * (bytes that are not UTF-8 become U+FFFD). Number cells show the value rounded to 6
 * significant digits (SI prefixes on V, A, Hz, ohm, S, s, W) and carry the exact value, as the
 * CSV files write it, in their data-v attribute. The sections appear in the order added; the
 * verdict banner (limits met and failed over every verdict table, the yield of a study, the
 * number of warnings) and the warnings come first, the plots last. */
typedef struct ss_html ss_html;

/* title: the page's heading (NULL: the title of the first circuit added, ss_html_add_run or
 * ss_html_add_study; "(untitled netlist)" when it has none); subtitle: a line under it (the
 * command, NULL: none). Both copied. Output *out, the caller's (ss_html_destroy).
 * Returns SS_OK, SS_ERR_NOMEM. */
SS_API ss_status ss_html_create(const char *title, const char *subtitle, ss_html **out,
                                ss_error *err);
SS_API void ss_html_destroy(ss_html **h);
/* The operating point (temperature, the op.csv rows -- the first 100 node voltages unless
 * nodes were selected -- and the report's device tables) and, when summary is not NULL and
 * the context has a stage, the stage figures (stage_summary.csv's rows). */
SS_API ss_status ss_html_add_run(ss_html *h, const ss_solver *sv, const ss_table *summary,
                                 ss_error *err);
/* A verdict table of ss_check_evaluate (measured, lower, upper, margin, pass) under heading;
 * its limits count in the banner. SS_ERR_INPUT for any other table. */
SS_API ss_status ss_html_add_verdicts(ss_html *h, const char *heading, const ss_table *verdicts,
                                      ss_error *err);
/* Any table under heading, at most max_rows rows (0: all). */
SS_API ss_status ss_html_add_table(ss_html *h, const char *heading, const ss_table *t,
                                   int max_rows, ss_error *err);
/* A paragraph of text in the sections. */
SS_API ss_status ss_html_add_note(ss_html *h, const char *text, ss_error *err);
/* Marks the page failed (the banner says FAIL) for a reason beside the limits, shown in the
 * banner: a required yield not reached, lint warnings under --strict. */
SS_API ss_status ss_html_fail(ss_html *h, const char *reason, ss_error *err);
/* A warning; check, when not NULL, names the lint check that raised it. */
SS_API ss_status ss_html_add_warning(ss_html *h, const char *text, const char *check,
                                     ss_error *err);
/* Every warning of the context so far (ss_solver_warning), lint warnings marked. */
SS_API ss_status ss_html_add_warnings(ss_html *h, const ss_solver *sv, ss_error *err);
/* A plot: an SVG document of len bytes (its XML declaration and doctype are dropped), shown
 * with caption. SS_ERR_INPUT when there is no <svg element. */
SS_API ss_status ss_html_add_svg(ss_html *h, const char *caption, const char *svg, size_t len,
                                 ss_error *err);
/* Every .svg file written so far in the output set, in the order the files were reserved,
 * each with its file name as caption: call it after the plots are written and before
 * ss_outset_commit. */
SS_API ss_status ss_html_add_outset_plots(ss_html *h, const ss_outset *set, ss_error *err);
/* Writes the page to path atomically. Returns SS_OK, SS_ERR_INPUT (no path), SS_ERR_IO,
 * SS_ERR_NOMEM (also when an earlier add ran out of memory). */
SS_API ss_status ss_html_write(const ss_html *h, const char *path, ss_error *err);

#ifdef __cplusplus
}
#endif
#endif
