/* stagesim: limits, checks and studies: sweeps, tolerance runs, sensitivities, preferred values,
 * shards
 * Part of the public API; include "stagesim/stagesim.h" for all of it (docs/api.md). */
#ifndef STAGESIM_STUDY_H
#define STAGESIM_STUDY_H

#include "stagesim/core.h"
#include "stagesim/plot.h"

#ifdef __cplusplus
extern "C" {
#endif

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
/* The same, the netlist parsed with model folders (ss_circuit_parse_file_models). */
SS_API ss_status ss_study_create_models(const char *netlist_path, const ss_override *sets,
                                        int n_sets, const char *const *model_dirs,
                                        int n_model_dirs, ss_study **out, ss_error *err);
SS_API ss_status ss_study_set_stage(ss_study *s, const char *in_source, const char *out_node,
                                    ss_error *err);
/* The noise analysis's own band and weighting at every point (ss_solver_set_noise_band and
 * ss_solver_set_noise_weight on each context; part of the study's identity). */
SS_API ss_status ss_study_set_noise_band(ss_study *s, double lo_hz, double hi_hz, int per_decade,
                                         ss_error *err);
SS_API ss_status ss_study_set_noise_weight(ss_study *s, const char *weight, ss_error *err);
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
/* `NAME,NAME[,...]=RHO`: the tolerances named (added before, each in one group at most) are
 * drawn correlated, every pair with correlation RHO (0 .. 1) of their standard normal draws:
 * z_i = sqrt(RHO) c + sqrt(1 - RHO) e_i, c common to the group and e_i each one's own; a
 * gaussian tolerance takes mean + sigma z_i, a uniform one lo + (hi - lo) Phi(z_i) (a gaussian
 * copula). docs/studies.md. */
SS_API ss_status ss_study_add_match(ss_study *s, const char *spec, ss_error *err);
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
 * the exit-code class of the failure), then every figure of the nominal run. With limits (the
 * netlist's .expect lines or ss_study_add_limits) each point is judged: a column `pass` (1/0)
 * after status, and the first limit the point fails (its quantity; "unsolved"; "" when it
 * passes) as the row's label (ss_table_row_label), a text column `failed_limit` written
 * before the figures. Before any point
 * is solved: SS_ERR_INPUT for a limit naming no figure (ss_limits_check_names) and, with
 * trials, for a name both swept and toleranced. */
SS_API ss_status ss_study_run(ss_study *s, ss_table **out_points, ss_error *err);
SS_API void ss_study_destroy(ss_study **s);

/* Statistics of a points table: per figure n, min, max, mean, std (sample), and, for figures
 * with limits, the fraction of points passing; a row `all_limits` holds the yield. With limits
 * also, per limited figure, its worst point (smallest distance to its limits' bounds):
 * worst_point, worst_value, worst_margin (negative when failing) and worst_NAME for every swept
 * and sampled column of the points. */
SS_API ss_status ss_study_summarize(const ss_table *points, const ss_limits *limits,
                                    ss_table **out_summary, ss_error *err);

/* Writes an SVG of a points table (study.csv's): one panel per figure with limits (without
 * limits: per figure that varies; at most 40) -- histogram 1: a histogram of its values with
 * the limits as vertical lines (tolerance runs); 0: its values over the first swept value, one
 * curve per combination of the other swept values, the limit band shaded and failing points
 * marked (sweeps). title may be NULL. Atomic. SS_ERR_INPUT: no point, no figure to plot, no
 * swept value (histogram 0). */
SS_API ss_status ss_study_write_plot(const ss_table *points, const ss_limits *limits,
                                     int histogram, const char *title, const char *path,
                                     ss_error *err);

/* The study's part of an HTML report (stagesim/plot.h): the page's title from the netlist's
 * (when none was given) and the nominal circuit's warnings; then, when points is not NULL (with
 * its summary, ss_study_summarize), the yield in the banner, the worst point of each of the
 * study's limits (the smallest margin; a point without the figure is worst of all) with its
 * measured value, bounds, margin, the fraction of points passing and its verdict -- these count
 * as the page's limits -- and the summary table. */
SS_API ss_status ss_html_add_study(ss_html *h, const ss_study *s, const ss_table *points,
                                   const ss_table *summary, ss_error *err);

/* The study's limits judged against one column of a figures table labelled by figure (snap's
 * "preferred"), as a verdict table of the page (ss_html_add_verdicts). Nothing without limits.
 * SS_ERR_INPUT when the column is missing or a limit names no figure of the table. */
SS_API ss_status ss_html_add_study_verdicts(ss_html *h, const ss_study *s, const char *heading,
                                            const ss_table *figures, const char *column,
                                            ss_error *err);

/* Normalised sensitivities (dF/F)/(dx/x) of every figure to every toleranced or listed value,
 * by central differences of +-1 %: a table labelled by figure, one column per value. The
 * limits' names are checked first (ss_limits_check_names). */
SS_API ss_status ss_study_sensitivity(ss_study *s, ss_table **out_sens, ss_error *err);

/* Operating point at the spread extremes and at two temperatures (-273.15 < temp_lo_c <
 * temp_hi_c <= 1000, else SS_ERR_INPUT). The spread parameters are each kind's (docs/studies.md:
 * a BJT's BF; a JFET's BETA and VTO, a MOSFET's KP and VTO), at their tolerance limits, else
 * halved and doubled (a VTO: +-50 % of its magnitude); the corner value replaces a --set one.
 * The low extreme puts every one at the end that lowers the transistor's main current, the
 * high one at the other end. One row per transistor and corner ("q1 beta low, -40 C", "j1
 * current high, 85 C") with temp_c, beta_corner (-1 low, +1 high), then three columns per
 * transistor kind in the circuit (device table order; the BJT's when there is none): its main
 * current, its main voltage and 1/0 in its amplifying region -- ic_a, vce_v, forward_active
 * for BJTs, id_a, vds_v, saturation for JFETs and MOSFETs (one set of columns for both FET
 * kinds) -- empty where the row is another kind's or unsolved. */
SS_API ss_status ss_study_corners(ss_study *s, double temp_lo_c, double temp_hi_c,
                                  ss_table **out_corners, ss_error *err);

/* Snaps every element whose letter is in kinds ("r", "rc") to the nearest value of series
 * E12/E24/E96 (an element given with --set from its --set value) and solves again; the
 * limits' names are checked first. Outputs: per element value, preferred, change_pct; per
 * figure computed, preferred, shift, shift_pct. */
SS_API ss_status ss_study_snap(ss_study *s, int series, const char *kinds,
                               ss_table **out_values, ss_table **out_figures, ss_error *err);

/* What ss_study_snap_with snaps. */
typedef struct ss_snap_opts {
    int series_r; /* the resistors' series: 6, 12, 24, 48, 96 or 192; 0 leaves them */
    int series_c; /* the capacitors' series (E6 / E12 are what capacitors come in, common
                   * practice); 0 leaves capacitors as they are */
    const char *keep; /* elements left as they are, "RS,RL" (not the user's to choose: a
                       * sensor's source resistance, the load); NULL none */
} ss_snap_opts;

/* Snaps every resistor and (series_c > 0) capacitor but the kept ones to the nearest value of
 * its series and solves again; the limits' names are checked first. Outputs: per element
 * value, preferred, change_pct, series; per figure computed, preferred, shift (in the figure's
 * unit: dB for a _db figure), shift_pct (empty for a _db figure: a percentage of a dB value
 * means nothing), and with limits `pass` (1/0 for the snapped value, empty for a figure without
 * limit); *n_failed (may be NULL) the limits the snapped circuit fails. A kept name that is no
 * resistor or capacitor of the circuit is SS_ERR_INPUT. */
SS_API ss_status ss_study_snap_with(ss_study *s, const ss_snap_opts *opts, ss_table **out_values,
                                    ss_table **out_figures, int *n_failed, ss_error *err);

/* Reads a CSV written by ss_table_write_csv back (for merging shards); a study's text column
 * `failed_limit` becomes the row labels. */
SS_API ss_status ss_table_read_csv(const char *path, ss_table **out, ss_error *err);
/* Concatenates study shards and sorts them by point; the header must match and every point
 * appear once. The result written with ss_table_write_csv equals the unsharded run's file. */
SS_API ss_status ss_study_merge(ss_table *const *shards, int n_shards, ss_table **out_points,
                                ss_error *err);

/* ---- preferred values ------------------------------------------------------------------ */

/* Nearest value of an IEC 60063 series (12, 24 or 96 values per decade) to value (> 0). */
SS_API ss_status ss_eseries_nearest(int series, double value, double *out_value, ss_error *err);

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

#ifdef __cplusplus
}
#endif
#endif
