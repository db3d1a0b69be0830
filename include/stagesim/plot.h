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

#ifdef __cplusplus
}
#endif
#endif
