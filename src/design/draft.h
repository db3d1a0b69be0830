/* The draft's pieces shared by its files: the draft being built (draft_text.c keeps the parts,
 * the text and the warnings; draft.c holds the rules and the kinds). */
#ifndef SS_DESIGN_DRAFT_H
#define SS_DESIGN_DRAFT_H

#include "stagesim/draft.h"
#include "util/util.h"

enum { DRAFT_MAX_PARTS = 32, DRAFT_MAX_WARNINGS = 24 };

typedef struct draft_part {
    char name[16];
    double value;
    char text[32]; /* as the netlist writes it */
    char what[96];
} draft_part;

struct ss_draft {
    char *text;
    char *warnings[DRAFT_MAX_WARNINGS];
    int n_warnings;
    draft_part parts[DRAFT_MAX_PARTS];
    int n_parts;
};

/* What a kind's design writes while it works: the reasoning (comment lines), the element
 * lines, the limits, on the series of the requirement. */
typedef struct draft_ctx {
    ss_draft_req rq; /* defaults filled in */
    ss_draft *d;
    ss_strbuf why, body, expect;
    int step;        /* the reasoning's step number */
    int oom;         /* an allocation failed */
} draft_ctx;

/* ---- draft_text.c ---------------------------------------------------------------------- */
/* A value as a netlist number with an SI suffix: 4.7k, 1.2meg, 22u, 390. */
SS_HIDDEN const char *draft_fmt_value(char *buf, size_t len, double v);
/* Nearest value of the resistor series; the smallest value of the capacitor series that is
 * not below v (a larger coupling capacitor only lowers the corner). */
SS_HIDDEN double draft_snap_r(const draft_ctx *c, double v);
SS_HIDDEN double draft_snap_c_up(const draft_ctx *c, double v);
/* The least value of the resistor series not below v (a bias resistor that must reach v). */
SS_HIDDEN double draft_snap_r_up(const draft_ctx *c, double v);
/* One reasoning line ("*   ..."); a new numbered step; a warning (also in the header). */
SS_HIDDEN void draft_why(draft_ctx *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
SS_HIDDEN void draft_step(draft_ctx *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
SS_HIDDEN void draft_warn(draft_ctx *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* An element line (the part is recorded for R and C: their letter is the name's first). */
SS_HIDDEN void draft_elem(draft_ctx *c, const char *name, const char *n1, const char *n2,
                          double value, const char *what);
/* A raw line of the body (a transistor, a source). */
SS_HIDDEN void draft_line(draft_ctx *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
SS_HIDDEN void draft_expect(draft_ctx *c, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
/* Puts the netlist together into c->d->text: title, cautions, requirements, the reasoning,
 * the warnings, the model card, the body, the analyses, the limits and the suggested rating
 * limits (rating: comment lines). */
SS_HIDDEN ss_status draft_assemble(draft_ctx *c, const char *title, const char *card,
                                   double ac_lo_hz, double ac_hi_hz, const char *load_field,
                                   const char *rating, ss_error *err);

#endif
