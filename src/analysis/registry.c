/* The analyses by name, in the order `stagesim run` runs them: each with its netlist
 * directive, when a context asks for it, where its rows go and its main output file. The
 * analyses themselves are their files'; what the command line does around them is run.c's. */
#include "analysis/analysis.h"

typedef struct analysis_def {
    const char *name;      /* "dc" */
    const char *directive; /* ".dc" */
    const char *output;    /* its main file, "dc.csv" */
    int (*wanted)(const ss_solver *sv);
    ss_status (*emit)(ss_solver *sv, ss_sink *sink, ss_error *err);
} analysis_def;

static ss_analysis_flags flags_of(const ss_solver *sv)
{
    ss_analysis_flags f;
    ss_solver_analyses(sv, &f);
    return f;
}

/* every run solves the operating point first, whether or not the netlist says .op */
static int want_op(const ss_solver *sv)
{
    (void)sv;
    return 1;
}
static int want_ac(const ss_solver *sv) { return flags_of(sv).ac; }
/* the stage figures are taken over the .ac frequencies */
static int want_stage(const ss_solver *sv) { return flags_of(sv).stage && flags_of(sv).ac; }
static int want_dc(const ss_solver *sv) { return flags_of(sv).dc; }
static int want_tran(const ss_solver *sv) { return flags_of(sv).tran; }
static int want_large_signal(const ss_solver *sv)
{
    return flags_of(sv).large_signal && flags_of(sv).stage;
}
static int want_noise(const ss_solver *sv) { return flags_of(sv).noise; }

/* the rows alone, for the analyses whose emit gives more */
static ss_status emit_op(ss_solver *sv, ss_sink *sink, ss_error *err)
{
    return ss_op_emit(sv, sink, NULL, err);
}
static ss_status emit_stage(ss_solver *sv, ss_sink *sink, ss_error *err)
{
    return ss_stage_emit(sv, sink, NULL, err);
}
static ss_status emit_noise(ss_solver *sv, ss_sink *sink, ss_error *err)
{
    return ss_noise_emit(sv, sink, NULL, NULL, err);
}

/* In the order run takes them: the analyses at the operating point (its own rows, the AC
 * sweep, the stage over it) before .dc, which moves the operating point; then the rest. */
static const analysis_def ANALYSES[] = {
    {"op", ".op", "op.csv", want_op, emit_op},
    {"ac", ".ac", "ac.csv", want_ac, ss_ac_sweep_emit},
    {"stage", ".stage", "stage.csv", want_stage, emit_stage},
    {"dc", ".dc", "dc.csv", want_dc, ss_dc_sweep_emit},
    {"tran", ".tran", "tran.csv", want_tran, ss_tran_emit},
    {"large_signal", ".large_signal", "large_signal.csv", want_large_signal,
     ss_stage_large_signal_emit},
    {"noise", ".noise", "noise.csv", want_noise, emit_noise},
};
#define N_ANALYSES ((int)(sizeof ANALYSES / sizeof ANALYSES[0]))

static const analysis_def *analysis_at(int i)
{
    return i >= 0 && i < N_ANALYSES ? &ANALYSES[i] : NULL;
}

int ss_analysis_count(void) { return N_ANALYSES; }

const char *ss_analysis_name(int i) { return analysis_at(i) ? analysis_at(i)->name : NULL; }

const char *ss_analysis_directive(int i)
{
    return analysis_at(i) ? analysis_at(i)->directive : NULL;
}

const char *ss_analysis_output(int i) { return analysis_at(i) ? analysis_at(i)->output : NULL; }

int ss_analysis_wanted(const ss_solver *sv, int i)
{
    return sv && analysis_at(i) ? analysis_at(i)->wanted(sv) : 0;
}

ss_status ss_analysis_emit(ss_solver *sv, int i, ss_sink *sink, ss_error *err)
{
    if (!analysis_at(i))
        return err_set(err, SS_ERR_INPUT, NULL, 0, "no analysis %d (there are %d)", i,
                       N_ANALYSES);
    if (!sv || !sink)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "ss_analysis_emit: no context or sink");
    return analysis_at(i)->emit(sv, sink, err);
}
