/* stagesim public C API, design tier: a first design of a transistor stage from its kind and
 * requirements, by rules of thumb (docs/design.md). The answer is a commented netlist that
 * stagesim reads as it is -- values on a preferred-value series, the reasoning step by step
 * as comments, a generic invented model card inline, a .stage line, an .ac sweep over the
 * band and .expect limits from the requirements -- plus the warnings of a requirement the
 * rules could not meet.
 *
 * A draft is a starting point for the bench, not a verified product: ratings (power,
 * voltage, temperature) are not checked unless limits say so. */
#ifndef STAGESIM_DRAFT_H
#define STAGESIM_DRAFT_H

#include "stagesim/core.h"

#ifdef __cplusplus
extern "C" {
#endif

/* The kinds of stage a draft knows (names for ss_draft_kind_parse in parentheses). */
typedef enum ss_draft_kind {
    SS_DRAFT_FOLLOWER = 0, /* "follower": emitter follower, divider bias, bootstrapped when
                              the input impedance asks for it */
    SS_DRAFT_CE,           /* "ce": common emitter, divider bias, emitter fully bypassed */
    SS_DRAFT_CE_SPLIT,     /* "ce-split": common emitter, the emitter resistor split, the
                              unbypassed part setting the gain */
    SS_DRAFT_CE_FOLLOWER,  /* "ce-follower": a ce-split stage direct-coupled to a follower */
    SS_DRAFT_JFET_CS,      /* "jfet-cs": N-channel JFET common source, self-biased, the
                              source resistor split when a gain is asked */
    SS_DRAFT_N_KINDS
} ss_draft_kind;

/* The requirements. A NaN field is "not given": the rules choose (docs/design.md gives each
 * default). Fields and their names in messages (the command line's option names without
 * the dashes):
 *   supply     supply voltage, V, > 0 (default 12)
 *   current    quiescent current of the stage's output device (collector, or the JFET's
 *              drain), A, > 0
 *   swing      peak output swing wanted at the load, V, > 0
 *   gain       |voltage gain| from the source's EMF to the output, V/V, > 0
 *   zin        least input impedance of the stage itself (the source resistance not
 *              included), ohm, > 0
 *   load       the load's resistance, ohm, > 0
 *   source     the source's resistance, ohm, >= 0 (default 0)
 *   f-low, f-high  the band, Hz, 0 < f-low < f-high (defaults 20 and 20k)
 *   series, cap-series  IEC 60063 series of the resistors (default 24) and of the
 *              capacitors (default 12): 6, 12, 24, 48, 96 or 192 */
typedef struct ss_draft_req {
    ss_draft_kind kind;
    double supply_v, current_a, swing_v, gain, zin_ohm, load_ohm, source_ohm;
    double f_low_hz, f_high_hz;
    int series, cap_series;
} ss_draft_req;

typedef struct ss_draft ss_draft;

/* Every field not given (NaN), series 24 and 12, the kind given. */
SS_API void ss_draft_req_init(ss_draft_req *req, ss_draft_kind kind);
/* The kind of a name ("follower", "ce", "ce-split", "ce-follower", "jfet-cs"); -1 unknown. */
SS_API int ss_draft_kind_parse(const char *name);
/* The name of a kind; NULL when out of range. */
SS_API const char *ss_draft_kind_name(int kind);

/* Drafts the stage. A requirement out of its range or impossible for the kind (a follower
 * asked for gain, a JFET current above the card's IDSS) is SS_ERR_INPUT with a message that
 * begins with the requirement's name and a colon ("gain: ..."). A requirement the rules cannot
 * meet but that is not impossible (a zin the bias network cannot give, a gain above what the
 * supply allows) still gives the design, with a warning. Free with ss_draft_destroy. */
SS_API ss_status ss_draft_create(const ss_draft_req *req, ss_draft **out, ss_error *err);
SS_API void ss_draft_destroy(ss_draft *d);

/* The netlist text (NUL-terminated, owned by d). */
SS_API const char *ss_draft_netlist(const ss_draft *d);
/* Writes the netlist to path, atomically (a staged name of an output set, ss_outset_add, or any
 * path). SS_ERR_IO naming the file when it cannot be written. */
SS_API ss_status ss_draft_write(const ss_draft *d, const char *path, ss_error *err);
/* The warnings, one sentence each, 0 .. count-1; NULL out of range. */
SS_API int ss_draft_warning_count(const ss_draft *d);
SS_API const char *ss_draft_warning(const ss_draft *d, int k);
/* The parts chosen (resistors and capacitors, in netlist order): name, value (ohm or F, on
 * the series), the value as the netlist writes it (4.7k) and what it is for; any output may
 * be NULL. 0 when k is in range, -1 otherwise. */
SS_API int ss_draft_part_count(const ss_draft *d);
SS_API int ss_draft_part(const ss_draft *d, int k, const char **name, double *value,
                         const char **written, const char **what);

#ifdef __cplusplus
}
#endif

#endif
