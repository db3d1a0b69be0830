/* stagesim draft: a first design of a stage from its kind and requirements. The rules are the
 * library's (ss_draft_create, docs/design.md); this reads the options, writes draft.cir into
 * the output folder and prints the parts and the warnings. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

int parse_draft_option(const char *n, const char *o, const char *next, cli_args *a)
{
    ss_draft_req *q = &a->draft;
    if (strcmp(n, "--supply") == 0)
        return parse_real(o, next, 0.0, 1, 1000.0, 0, "a voltage above 0 and at most 1000 V",
                          &q->supply_v);
    if (strcmp(n, "--current") == 0)
        return parse_real(o, next, 0.0, 1, 10.0, 0, "a current above 0 and at most 10 A",
                          &q->current_a);
    if (strcmp(n, "--swing") == 0)
        return parse_real(o, next, 0.0, 1, 1000.0, 0, "a peak voltage above 0", &q->swing_v);
    if (strcmp(n, "--gain") == 0)
        return parse_real(o, next, 0.0, 1, 1e6, 0, "a voltage gain (V/V) above 0, at most 1e6",
                          &q->gain);
    if (strcmp(n, "--zin") == 0)
        return parse_real(o, next, 0.0, 1, 1e12, 0, "a resistance above 0 ohm", &q->zin_ohm);
    if (strcmp(n, "--source") == 0)
        return parse_real(o, next, 0.0, 0, 1e12, 0, "a resistance of 0 ohm or more",
                          &q->source_ohm);
    if (strcmp(n, "--f-low") == 0)
        return parse_real(o, next, 0.0, 1, 1e9, 0, "a frequency above 0 and at most 1 GHz",
                          &q->f_low_hz);
    if (strcmp(n, "--f-high") == 0)
        return parse_real(o, next, 0.0, 1, 1e9, 0, "a frequency above 0 and at most 1 GHz",
                          &q->f_high_hz);
    return -1;
}

/* The library's "field: message" as "--field: message" (the option that asks for it). */
static int requirement_error(const ss_error *err)
{
    if (err->code != SS_ERR_INPUT)
        return fail(err);
    const char *colon = strchr(err->message, ':');
    if (!colon || colon == err->message || colon - err->message > 16)
        return usage_errorf("%s", err->message);
    if (strncmp(err->message, "kind:", 5) == 0)
        return usage_errorf("draft: KIND%s", colon);
    return usage_errorf("--%s", err->message);
}

int cmd_draft(const cli_args *a)
{
    int kind = ss_draft_kind_parse(a->netlist);
    if (kind < 0)
        return usage_error("draft: unknown KIND '%s' (follower, ce, ce-split, ce-follower or "
                           "jfet-cs)",
                           a->netlist);
    ss_draft_req q = a->draft;
    q.kind = (ss_draft_kind)kind;
    if (a->load_ohm > 0.0)
        q.load_ohm = a->load_ohm;
    if (a->series)
        q.series = a->series;
    /* --cap-series is read with snap's reader (main.c), whose default is draft's too */
    if (a->cap_series == 0)
        return usage_error("%s", "--cap-series none is snap's (capacitors left as they are): a "
                                 "draft needs a capacitor series");
    q.cap_series = a->cap_series;
    ss_error err = {0};
    ss_draft *d = NULL;
    if (ss_draft_create(&q, &d, &err) != SS_OK)
        return requirement_error(&err);
    /* the file is written only when the design exists: nothing half-done is left behind */
    static const char *const names[1] = {"draft.cir"};
    const char *path[1] = {NULL};
    ss_outset *set = NULL;
    int rc = out_start(a, names, 1, path, &set);
    if (rc != EXIT_OK) {
        ss_draft_destroy(d);
        return rc;
    }
    if (ss_draft_write(d, path[0], &err) != SS_OK) {
        rc = fail(&err);
        ss_outset_destroy(&set);
        ss_draft_destroy(d);
        return rc;
    }
    rc = out_commit(set, EXIT_OK);
    ss_outset_destroy(&set);
    if (rc == EXIT_OK && !a->quiet) {
        printf("draft %s: %s/draft.cir\n\n", ss_draft_kind_name(kind), a->out_dir);
        for (int k = 0; k < ss_draft_part_count(d); k++) {
            const char *name, *text, *what;
            ss_draft_part(d, k, &name, NULL, &text, &what);
            printf("  %-5s %-8s %s\n", name, text, what);
        }
        printf("\n%d warning%s; judge it with: stagesim check %s/draft.cir\n",
               ss_draft_warning_count(d), ss_draft_warning_count(d) == 1 ? "" : "s", a->out_dir);
    }
    for (int k = 0; k < ss_draft_warning_count(d); k++)
        fprintf(stderr, "stagesim: warning: draft: %s\n", ss_draft_warning(d, k));
    ss_draft_destroy(d);
    return rc;
}
