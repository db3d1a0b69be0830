/* MNA pattern assembly and SuiteSparse KLU calls (real and complex). Setup allocates; the
 * per-iteration and per-frequency paths only refill values and refactor. */
#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <suitesparse/klu.h>

#include "mna/mna.h"

struct mna {
    int n;
    /* claims */
    int *claim_row, *claim_col;
    int n_claims, cap_claims;
    int claim_failed;
    int *claim_slot;
    /* compressed column pattern */
    int *Ap, *Ai;
    int nnz;
    int *diag;
    double *Ax;
    double complex *Az;
    klu_common common;
    klu_symbolic *sym;
    klu_numeric *num;
    klu_numeric *znum;
    mna_counters count;
};

mna *mna_create(int n_unknowns)
{
    mna *m = ss_alloc(sizeof *m);
    if (!m)
        return NULL;
    m->n = n_unknowns;
    klu_defaults(&m->common);
    return m;
}

void mna_destroy(mna **pm)
{
    if (!pm || !*pm)
        return;
    mna *m = *pm;
    klu_free_numeric(&m->num, &m->common);
    klu_z_free_numeric(&m->znum, &m->common);
    klu_free_symbolic(&m->sym, &m->common);
    ss_free(m->claim_row);
    ss_free(m->claim_col);
    ss_free(m->claim_slot);
    ss_free(m->Ap);
    ss_free(m->Ai);
    ss_free(m->diag);
    ss_free(m->Ax);
    ss_free(m->Az);
    ss_free(m);
    *pm = NULL;
}

int mna_reserve_claims(mna *m, size_t count)
{
    if (count > (size_t)INT_MAX)
        return -1;
    if ((int)count <= m->cap_claims)
        return 0;
    int *nr = ss_realloc(m->claim_row, count * sizeof *nr);
    if (!nr)
        return -1;
    m->claim_row = nr;
    int *nc = ss_realloc(m->claim_col, count * sizeof *nc);
    if (!nc)
        return -1;
    m->claim_col = nc;
    m->cap_claims = (int)count;
    return 0;
}

int mna_claim(mna *m, int row, int col)
{
    if (row < 0 || col < 0)
        return -1;
    if (m->n_claims == m->cap_claims) {
        int ncap = m->cap_claims ? m->cap_claims * 2 : 256;
        int *nr = ss_realloc(m->claim_row, (size_t)ncap * sizeof *nr);
        if (!nr) {
            m->claim_failed = 1;
            return -1;
        }
        m->claim_row = nr;
        int *nc = ss_realloc(m->claim_col, (size_t)ncap * sizeof *nc);
        if (!nc) {
            m->claim_failed = 1;
            return -1;
        }
        m->claim_col = nc;
        m->cap_claims = ncap;
    }
    m->claim_row[m->n_claims] = row;
    m->claim_col[m->n_claims] = col;
    return m->n_claims++;
}

int mna_claim_failed(const mna *m) { return m->claim_failed; }

ss_status mna_finalize(mna *m, int *bad_unknown)
{
    int n = m->n;
    *bad_unknown = -1;
    if (n <= 0)
        return SS_ERR_INTERNAL;
    /* diagonal of every unknown, so gmin stepping has a slot and the pattern never changes */
    for (int u = 0; u < n; u++)
        if (mna_claim(m, u, u) < 0)
            return SS_ERR_NOMEM;
    int nc = m->n_claims;
    /* counting sort by column, then by row within each column via a marker array */
    int *count = ss_alloc((size_t)(n + 1) * sizeof *count);
    int *order = ss_alloc((size_t)nc * sizeof *order);
    int *mark = ss_alloc((size_t)n * sizeof *mark);
    m->claim_slot = ss_alloc((size_t)nc * sizeof *m->claim_slot);
    m->Ap = ss_alloc((size_t)(n + 1) * sizeof *m->Ap);
    m->diag = ss_alloc((size_t)n * sizeof *m->diag);
    if (!count || !order || !mark || !m->claim_slot || !m->Ap || !m->diag) {
        ss_free(count);
        ss_free(order);
        ss_free(mark);
        return SS_ERR_NOMEM;
    }
    for (int k = 0; k < nc; k++)
        count[m->claim_col[k] + 1]++;
    for (int j = 0; j < n; j++)
        count[j + 1] += count[j];
    for (int k = 0; k < nc; k++)
        order[count[m->claim_col[k]]++] = k;
    /* count[j] now is the end of column j's claims; starts are count[j-1] (0 for j = 0) */
    int nnz = 0;
    for (int j = 0; j < n; j++)
        mark[j] = -1;
    int *rows = ss_alloc((size_t)nc * sizeof *rows);
    if (!rows) {
        ss_free(count);
        ss_free(order);
        ss_free(mark);
        return SS_ERR_NOMEM;
    }
    int start = 0;
    for (int j = 0; j < n; j++) {
        int end = count[j];
        m->Ap[j] = nnz;
        int col_start = nnz;
        for (int q = start; q < end; q++) {
            int k = order[q];
            int r = m->claim_row[k];
            if (mark[r] < col_start) { /* first claim of (r, j) */
                mark[r] = nnz;
                rows[nnz++] = r;
            }
            m->claim_slot[k] = mark[r];
            if (r == j)
                m->diag[j] = mark[r];
        }
        start = end;
    }
    m->Ap[n] = nnz;
    m->nnz = nnz;
    ss_free(count);
    ss_free(order);
    ss_free(mark);
    m->Ai = ss_realloc(rows, (size_t)(nnz ? nnz : 1) * sizeof *m->Ai);
    if (!m->Ai) {
        m->Ai = rows;
        return SS_ERR_NOMEM;
    }
    m->Ax = ss_alloc((size_t)nnz * sizeof *m->Ax);
    m->Az = ss_alloc((size_t)nnz * sizeof *m->Az);
    if (!m->Ax || !m->Az)
        return SS_ERR_NOMEM;
    ss_free(m->claim_row);
    ss_free(m->claim_col);
    m->claim_row = m->claim_col = NULL;
    /* klu.h takes non-const int pointers; the pattern is ours and stays unchanged */
    m->sym = klu_analyze(n, m->Ap, m->Ai, &m->common);
    if (!m->sym)
        return m->common.status == KLU_OUT_OF_MEMORY ? SS_ERR_NOMEM : SS_ERR_INTERNAL;
    if (m->common.structural_rank < n) {
        /* a structurally singular pattern: every unknown has its diagonal, so this cannot
         * happen through empty rows; report the first unknown whose column holds only the
         * diagonal as a hint */
        *bad_unknown = m->common.structural_rank;
        return SS_ERR_SINGULAR;
    }
    return SS_OK;
}

int mna_slot(const mna *m, int claim_id) { return claim_id < 0 ? -1 : m->claim_slot[claim_id]; }

void mna_release_claims(mna *m)
{
    ss_free(m->claim_slot);
    m->claim_slot = NULL;
}
int mna_diag_slot(const mna *m, int u) { return m->diag[u]; }
int mna_n(const mna *m) { return m->n; }
int mna_nnz(const mna *m) { return m->nnz; }
double *mna_values(mna *m) { return m->Ax; }
double complex *mna_zvalues(mna *m) { return m->Az; }
const int *mna_colptr(const mna *m) { return m->Ap; }
const int *mna_rowidx(const mna *m) { return m->Ai; }

void mna_reset_complex(mna *m) { klu_z_free_numeric(&m->znum, &m->common); }

void mna_reset_numeric(mna *m)
{
    klu_free_numeric(&m->num, &m->common);
    klu_z_free_numeric(&m->znum, &m->common);
}

static ss_status factor_status(mna *m, int *bad_unknown)
{
    if (m->common.status == KLU_OUT_OF_MEMORY)
        return SS_ERR_NOMEM;
    *bad_unknown = m->common.singular_col < m->n ? m->common.singular_col : -1;
    return SS_ERR_SINGULAR;
}

const mna_counters *mna_get_counters(const mna *m) { return &m->count; }

ss_status mna_solve_real(mna *m, double *b, int *bad_unknown, double *rcond_out)
{
    *bad_unknown = -1;
    m->count.real_solves++;
    int fresh = 0;
    if (m->num) {
        if (!klu_refactor(m->Ap, m->Ai, m->Ax, m->sym, m->num, &m->common)) {
            klu_free_numeric(&m->num, &m->common);
        } else if (!klu_rcond(m->sym, m->num, &m->common) ||
                   !(m->common.rcond >= MNA_RCOND_REPIVOT)) {
            /* refactor reuses the old pivots: when they have gone poor, pivot afresh */
            klu_free_numeric(&m->num, &m->common);
        }
    }
    if (!m->num) {
        m->num = klu_factor(m->Ap, m->Ai, m->Ax, m->sym, &m->common);
        if (!m->num)
            return factor_status(m, bad_unknown);
        fresh = 1;
        if (!klu_rcond(m->sym, m->num, &m->common))
            return factor_status(m, bad_unknown);
    }
    (void)fresh;
    if (rcond_out)
        *rcond_out = m->common.rcond;
    if (m->common.rcond == 0.0)
        return factor_status(m, bad_unknown);
    if (!klu_solve(m->sym, m->num, m->n, 1, b, &m->common))
        return SS_ERR_INTERNAL;
    return SS_OK;
}

ss_status mna_solve_complex(mna *m, double complex *b, int *bad_unknown, double *rcond_out)
{
    *bad_unknown = -1;
    /* C99 double complex has the interleaved (re, im) layout klu_z_* expects */
    double *az = (double *)m->Az;
    double *bz = (double *)b;
    m->count.complex_solves++;
    if (m->znum) {
        if (!klu_z_refactor(m->Ap, m->Ai, az, m->sym, m->znum, &m->common)) {
            klu_z_free_numeric(&m->znum, &m->common);
        } else if (!klu_z_rcond(m->sym, m->znum, &m->common) ||
                   !(m->common.rcond >= MNA_RCOND_REPIVOT)) {
            klu_z_free_numeric(&m->znum, &m->common);
        }
    }
    if (!m->znum) {
        m->znum = klu_z_factor(m->Ap, m->Ai, az, m->sym, &m->common);
        if (!m->znum)
            return factor_status(m, bad_unknown);
        if (!klu_z_rcond(m->sym, m->znum, &m->common))
            return factor_status(m, bad_unknown);
    }
    if (rcond_out)
        *rcond_out = m->common.rcond;
    if (m->common.rcond == 0.0)
        return factor_status(m, bad_unknown);
    if (!klu_z_solve(m->sym, m->znum, m->n, 1, bz, &m->common))
        return SS_ERR_INTERNAL;
    return SS_OK;
}

ss_status mna_solve_complex_again(mna *m, double complex *b)
{
    if (!m->znum)
        return SS_ERR_INTERNAL;
    m->count.complex_extra_solves++;
    if (!klu_z_solve(m->sym, m->znum, m->n, 1, (double *)b, &m->common))
        return SS_ERR_INTERNAL;
    return SS_OK;
}

ss_status mna_solve_complex_transpose_again(mna *m, double complex *b)
{
    if (!m->znum)
        return SS_ERR_INTERNAL;
    m->count.complex_extra_solves++;
    /* conj_solve = 0: A.' x = b, the plain transpose (Debian 12 klu.h, SuiteSparse 5.12) */
    if (!klu_z_tsolve(m->sym, m->znum, m->n, 1, (double *)b, 0, &m->common))
        return SS_ERR_INTERNAL;
    return SS_OK;
}

ss_status mna_solve_real_again(mna *m, double *b)
{
    if (!m->num)
        return SS_ERR_INTERNAL;
    if (!klu_solve(m->sym, m->num, m->n, 1, b, &m->common))
        return SS_ERR_INTERNAL;
    return SS_OK;
}

/* Parity of a permutation by its cycles: +1 even, -1 odd. */
static int perm_sign(const int *p, int n, unsigned char *seen)
{
    int sign = 1;
    memset(seen, 0, (size_t)n);
    for (int i = 0; i < n; i++) {
        if (seen[i])
            continue;
        int len = 0;
        for (int j = i; !seen[j]; j = p[j]) {
            seen[j] = 1;
            len++;
        }
        if (len % 2 == 0)
            sign = -sign;
    }
    return sign;
}

int mna_det_sign(const mna *m, unsigned char *scratch)
{
    if (!m->num || !m->sym)
        return 0;
    /* KLU factors P A Q = L U (row scaling by positive factors); block upper triangular, so
     * det A = sign(P) sign(Q) prod diag(U) */
    int sign = perm_sign(m->num->Pnum, m->n, scratch) * perm_sign(m->sym->Q, m->n, scratch);
    const double *ud = m->num->Udiag;
    for (int k = 0; k < m->n; k++) {
        if (ud[k] == 0.0)
            return 0;
        if (ud[k] < 0.0)
            sign = -sign;
    }
    return sign;
}
