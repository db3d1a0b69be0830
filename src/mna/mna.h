/* MNA matrix storage and the KLU wrappers: the sparse pattern is claimed entry by entry,
 * built and analysed once; real and complex values are refilled and refactored per solve.
 * What goes into the entries is the devices' business. */
#ifndef SS_MNA_H
#define SS_MNA_H

#include <complex.h>

#include "util/util.h"

typedef struct mna mna;

/* rcond below which a klu_refactor result is not trusted and klu_factor re-pivots */
#define MNA_RCOND_REPIVOT 1e-12
/* rcond below which the solution is reported as unreliable (warning) */
#define MNA_RCOND_WARN 1e-15

/* How much solving a circuit did (benchmarks compare it with the bare KLU cost). */
typedef struct mna_counters {
    long real_solves;          /* factor or refactor + solve */
    long complex_solves;       /* factor or refactor + solve */
    long complex_extra_solves; /* solve with an existing factorization */
} mna_counters;
SS_HIDDEN const mna_counters *mna_get_counters(const mna *m);

SS_HIDDEN mna *mna_create(int n_unknowns);
SS_HIDDEN void mna_destroy(mna **m);
/* Claims entry (row, col); returns a claim id, or -1 when either index is ground (-1) or on
 * allocation failure (then mna_claim_failed() is true). */
/* Room for count claims at once (no regrowth while they come); 0 ok, -1 no memory. */
SS_HIDDEN int mna_reserve_claims(mna *m, size_t count);
SS_HIDDEN int mna_claim(mna *m, int row, int col);
SS_HIDDEN int mna_claim_failed(const mna *m);
/* Builds the compressed-column pattern (duplicates merged), maps claims to value slots and
 * runs klu_analyze. Returns SS_OK, SS_ERR_NOMEM, SS_ERR_SINGULAR (structurally: *bad_unknown
 * names an unknown with no entries), SS_ERR_INTERNAL. */
SS_HIDDEN ss_status mna_finalize(mna *m, int *bad_unknown);
/* The value slot of a claim id (after finalize); -1 stays -1. */
SS_HIDDEN int mna_slot(const mna *m, int claim_id);
/* Frees the claim-to-slot map once every claim has been translated (mna_slot no longer works). */
SS_HIDDEN void mna_release_claims(mna *m);
/* Slot of the diagonal entry of unknown u (claimed for every unknown). */
SS_HIDDEN int mna_diag_slot(const mna *m, int u);

SS_HIDDEN int mna_n(const mna *m);
SS_HIDDEN int mna_nnz(const mna *m);
SS_HIDDEN double *mna_values(mna *m);          /* real values, nnz */
SS_HIDDEN double complex *mna_zvalues(mna *m); /* complex values, nnz */

/* Factor the present real values (refactor when possible) and solve A x = b in place.
 * Returns SS_OK, SS_ERR_SINGULAR (*bad_unknown set to the zero pivot's unknown), SS_ERR_NOMEM.
 * *rcond_out (optional) gets klu_rcond. */
SS_HIDDEN ss_status mna_solve_real(mna *m, double *b, int *bad_unknown, double *rcond_out);
SS_HIDDEN ss_status mna_solve_complex(mna *m, double complex *b, int *bad_unknown,
                                      double *rcond_out);
/* Solves with the real factorization of the last mna_solve_real (same matrix). */
SS_HIDDEN ss_status mna_solve_real_again(mna *m, double *b);
/* Solves with the complex factorization of the last mna_solve_complex (same matrix). */
SS_HIDDEN ss_status mna_solve_complex_again(mna *m, double complex *b);
/* Solves the transposed system A^T x = b (plain transpose, not the conjugate) with the
 * complex factorization of the last mna_solve_complex: the adjoint solve of the noise
 * analysis, where x holds the transfer impedance from every unknown to the output. b is
 * overwritten with x. Returns SS_OK, or SS_ERR_INTERNAL when there is no factorization. */
SS_HIDDEN ss_status mna_solve_complex_transpose_again(mna *m, double complex *b);
/* Sign of the determinant of the last real factorization (+1, -1, 0 when unknown);
 * scratch holds n bytes. */
SS_HIDDEN int mna_det_sign(const mna *m, unsigned char *scratch);
/* Forget the numeric factorizations (next solve calls klu_factor). */
SS_HIDDEN void mna_reset_numeric(mna *m);
/* Drops the complex factorization only: the next complex solve factors afresh, with pivoting,
 * so a sweep's results do not depend on which solves came before it. */
SS_HIDDEN void mna_reset_complex(mna *m);

/* Read-only views for benchmarks and the reference dump. */
SS_HIDDEN const int *mna_colptr(const mna *m);
SS_HIDDEN const int *mna_rowidx(const mna *m);

#endif
