/* stagesim: refining a design: the preferred-value lattice and the search for the preferred
 * values of a netlist's free values (.choose) that meet every limit with the largest margin at
 * the nominal point and at named corners (docs/refine.md)
 * Part of the public API; include "stagesim/stagesim.h" for all of it (docs/api.md). */
#ifndef STAGESIM_REFINE_H
#define STAGESIM_REFINE_H

#include "stagesim/core.h"
#include "stagesim/study.h"

#ifdef __cplusplus
extern "C" {
#endif

/* ---- the preferred values as a lattice ---------------------------------------------------- */

/* An IEC 60063 series (6, 12, 24, 48, 96 or 192 values per decade) as a lattice of indices:
 * index 0 is 1, index N is 10, index k - 1 the next lower preferred value and k + 1 the next
 * higher. ss_eseries_index gives the index of the member nearest value (> 0, on a logarithmic
 * scale), ss_eseries_value the member of an index (within 1e-30 .. 1e30), rounded exactly as
 * ss_eseries_nearest rounds. SS_ERR_INPUT for an unknown series or a value out of range. */
SS_API ss_status ss_eseries_index(int series, double value, long *out_index, ss_error *err);
SS_API ss_status ss_eseries_value(int series, long index, double *out_value, ss_error *err);

/* ---- refine: preferred values meeting every limit with the largest margin ---------------- */

typedef struct ss_refine ss_refine;

/* Parses the netlist once (with the --set overrides) and reads its `.choose NAME SERIES LO..HI`
 * lines: each NAME an element's main value written as a plain number on its own line, or a
 * global .param written NAME=NUMBER, in the netlist file itself (not an .include, not inside a
 * .subckt). Errors (SS_ERR_INPUT, with the .choose line's file:line): an unknown name, a name
 * chosen twice or given with --set, an unknown series, a range not LO < HI with LO > 0, a range
 * holding no member of the series, a value the chosen netlist could not carry. No .choose line
 * is SS_ERR_INPUT too. */
SS_API ss_status ss_refine_create(const char *netlist_path, const ss_override *sets, int n_sets,
                                  ss_refine **out, ss_error *err);
SS_API ss_status ss_refine_set_stage(ss_refine *r, const char *in_source, const char *out_node,
                                     ss_error *err);
/* Adds limits (copied) to the netlist's .expect lines; the limits judged are both. */
SS_API ss_status ss_refine_add_limits(ss_refine *r, const ss_limits *limits, ss_error *err);
/* Beta corners: every BJT model's BF at lo and at hi (factors of its nominal when relative,
 * else absolute values); 0 < lo < hi. Two corners, beta_low and beta_high. */
SS_API ss_status ss_refine_set_beta_range(ss_refine *r, double lo, double hi, int relative,
                                          ss_error *err);
/* Temperature corners temp_low and temp_high: -273.15 < lo_c < hi_c <= 1000. */
SS_API ss_status ss_refine_set_temps(ss_refine *r, double lo_c, double hi_c, ss_error *err);
/* Supply corners `NAME=PCT%` (0 < PCT < 100): the value NAME (a source's or a .param, as
 * --set names it) at (1 - PCT/100) and (1 + PCT/100) times nominal: corners supply_NAME_low
 * and supply_NAME_high. */
SS_API ss_status ss_refine_add_supply_tol(ss_refine *r, const char *spec, ss_error *err);
/* Worker threads, 1 .. 256 (default ss_cpu_count()); the result never depends on it. */
SS_API ss_status ss_refine_set_threads(ss_refine *r, int n_threads, ss_error *err);
/* The most candidate designs the search solves, 10 .. 10000000 (default 20000). */
SS_API ss_status ss_refine_set_budget(ss_refine *r, long max_candidates, ss_error *err);
/* Tolerances (docs/refine.md, "Yield"): `NAME=SPEC` as ss_study_add_tolerance reads it; the
 * netlist's .tolerance lines join the first one. With tolerances the lattice phases score a
 * candidate by its yield over the same trials (the draws spread makes for the seed; a tolerance
 * on a free value spreads around the candidate's value), the smallest nominal margin breaking
 * ties; only candidates meeting every limit at their nominal values get the trials. Corners
 * are refused with tolerances (ss_refine_run): a tolerance on temp or the supply takes their
 * place. */
SS_API ss_status ss_refine_add_tolerance(ss_refine *r, const char *spec, ss_error *err);
/* Trials per candidate, 1 .. 1000000 (default 200), and their seed (default 1). */
SS_API ss_status ss_refine_set_trials(ss_refine *r, long trials, unsigned long long seed,
                                      ss_error *err);
/* The target yield, 0 .. 1: the lattice search stops at the single-step neighbourhood optimum
 * once it is met (no pair steps). */
SS_API ss_status ss_refine_set_min_yield(ss_refine *r, double min_yield, ss_error *err);
/* Called on the calling thread after each batch of candidates: done so far, the budget. */
SS_API void ss_refine_set_progress(ss_refine *r, ss_progress_fn fn, void *ctx);

/* The search (docs/refine.md): Nelder-Mead on the logarithms of the free values within their
 * ranges, then a neighbourhood search on the series lattice from the nearest members (each
 * value one step up or down, then pairs), each candidate solved at the nominal point and at
 * every corner; the objective is the smallest normalised margin over every limit and corner.
 * The limits' names are checked first. Returns SS_OK when the search ran (whether or not the
 * best design meets every limit: ss_refine_stats), SS_ERR_INPUT (no limits, a limit naming no
 * figure, a corner value out of range), SS_ERR_NO_CONVERGENCE (the starting design has no
 * operating point at some corner and no candidate has one either), SS_ERR_NOMEM. */
SS_API ss_status ss_refine_run(ss_refine *r, ss_error *err);

typedef struct ss_refine_stats {
    int n_free, n_corners, n_limits, threads;
    long candidates;      /* candidate designs solved (each at every corner) */
    long circuits;        /* operating points solved: candidates x corners */
    long failed_circuits; /* of those, without an operating point */
    double seconds;       /* wall-clock time of the search */
    double min_margin;    /* the chosen design's smallest normalised margin */
    int feasible;         /* 1 when it meets every limit at every corner */
    /* with tolerances (else trials 0 and NaN yields) */
    long trials;          /* trials per candidate given them */
    long mc_candidates;   /* candidates given the trials (the others failed a limit at their
                           * nominal values) */
    double mc_seconds;    /* wall-clock time of the trials */
    long passed;          /* the chosen design's trials meeting every limit */
    double yield, yield_lo95, yield_hi95; /* passed / trials and its 95 % Wilson interval */
    double min_yield;     /* the target, -1 none */
} ss_refine_stats;
SS_API void ss_refine_get_stats(const ss_refine *r, ss_refine_stats *out);

/* After ss_refine_run (each table the caller's):
 *   design   labelled by free value: start (as written), chosen, series (6 .. 192), lo, hi
 *   margins  labelled by limit: lower, upper, then value_CORNER and margin_CORNER for each
 *            corner (nominal first), margin_min and pass (1/0) of the chosen design
 *   path     labelled by the binding limit ("gain_db@1000 at temp_high"): step, phase (1
 *            continuous, 2 one value a step, 3 two values a step, 4 the chosen design),
 *            candidates (solved so far), min_margin -- one row per improvement */
SS_API ss_status ss_refine_tables(const ss_refine *r, ss_table **out_design,
                                  ss_table **out_margins, ss_table **out_path, ss_error *err);
/* With tolerances, after ss_refine_run: the chosen design's trials, labelled by limit
 * (all_limits first: the yield; then every limit; then unsolved, the trials without an
 * operating point): trials, failing, passing, pass_fraction, wilson_lo95, wilson_hi95 (the
 * 95 % Wilson score interval of the fraction). SS_ERR_INPUT without tolerances. */
SS_API ss_status ss_refine_yield_table(const ss_refine *r, ss_table **out, ss_error *err);
/* The Wilson score interval of a binomial fraction k / n at z standard deviations (1.96 for
 * 95 %): E. B. Wilson, "Probable inference, the law of succession, and statistical
 * inference", J. Am. Stat. Assoc. 22 (1927) 209-212. */
SS_API void ss_wilson_interval(long k, long n, double z, double *lo, double *hi);
/* The limits failing with the chosen design, as "QUANTITY at CORNER", i = 0 .. ; NULL past the
 * end (every limit met: NULL at once). */
SS_API const char *ss_refine_binding(const ss_refine *r, int i);
/* Writes the netlist file again with each free value's token replaced by its chosen value
 * (SI notation: 4.7k, 100n) and every other byte as read, atomically. */
SS_API ss_status ss_refine_write_netlist(const ss_refine *r, const char *path, ss_error *err);
SS_API void ss_refine_destroy(ss_refine **r);

#ifdef __cplusplus
}
#endif
#endif
