/* pn-junction helpers shared by the diode and the BJT: capped exponential, Shockley current,
 * junction-voltage limiting, critical voltage, depletion capacitance. No device state here. */
#ifndef SS_JUNCTION_H
#define SS_JUNCTION_H

#include <math.h>

/* Exponent cap: above this argument exp() continues as a straight line with matching value
 * and slope, so a wild Newton step cannot overflow (common practice; docs/models.md). High
 * enough that a real operating point never reaches it even with IS = 1e-60 A at amperes
 * (e^200 = 7e86), low enough that products of such terms stay far from overflow. */
#define JUNCTION_EXP_ARG_MAX 200.0

/* e = exp(a) - 1 and d = d/da exp(a), with the linear continuation above the cap.
 * expm1 keeps small biases from cancelling. */
static inline void junction_expm1(double a, double *em1, double *d)
{
    if (a > JUNCTION_EXP_ARG_MAX) {
        double emax = exp(JUNCTION_EXP_ARG_MAX);
        *em1 = emax * (1.0 + (a - JUNCTION_EXP_ARG_MAX)) - 1.0;
        *d = emax;
    } else {
        *em1 = expm1(a);
        *d = *em1 + 1.0;
    }
}

/* Shockley junction: I = is (exp(v/nvt) - 1), writes dI/dv into *g. */
static inline double junction_current(double is_a, double v, double nvt, double *g)
{
    double em1, d;
    junction_expm1(v / nvt, &em1, &d);
    *g = is_a * d / nvt;
    return is_a * em1;
}

/* Vcrit = n Vt ln(n Vt / (sqrt(2) IS)): where the limiting starts (docs/models.md). */
static inline double junction_vcrit(double nvt, double is_a)
{
    return nvt * log(nvt / (sqrt(2.0) * is_a));
}

/* Junction-voltage limiting after Nagel 1975 (docs/models.md): keeps a Newton step on an
 * exponential from leaping; sets *limited when it changed vnew. */
static inline double junction_limit(double vnew, double vold, double nvt, double vcrit,
                                    int *limited)
{
    if (vnew > vcrit && fabs(vnew - vold) > 2.0 * nvt) {
        double v;
        if (vold > 0.0) {
            double a = 1.0 + (vnew - vold) / nvt;
            v = a > 0.0 ? vold + nvt * log(a) : vcrit;
        } else {
            v = nvt * log(vnew / nvt);
        }
        *limited = 1;
        return v;
    }
    return vnew;
}

/* Depletion capacitance with the FC linear extension (Nagel 1975; Getreu 1976). */
static inline double junction_depletion_cap(double v, double cj, double vj, double m, double fc)
{
    if (cj == 0.0)
        return 0.0;
    if (v < fc * vj)
        return cj * pow(1.0 - v / vj, -m);
    return cj * pow(1.0 - fc, -(1.0 + m)) * (1.0 - fc * (1.0 + m) + m * v / vj);
}

/* Depletion charge: the integral from 0 to v of junction_depletion_cap, so that its
 * derivative is exactly that capacitance (docs/transient.md derives it). Writes dQ/dv into
 * *cap. Below FC VJ: Q = CJ VJ (1 - (1 - v/VJ)^(1-M)) / (1 - M) (M = 1: -CJ VJ ln(1 - v/VJ));
 * from FC VJ up, the charge there plus CJ/F2 (F3 (v - FC VJ) + M/(2 VJ) (v^2 - (FC VJ)^2)),
 * F2 = (1 - FC)^(1+M), F3 = 1 - FC (1 + M), the integral of the linear extension. */
static inline double junction_depletion_charge(double v, double cj, double vj, double m,
                                               double fc, double *cap)
{
    *cap = 0.0;
    if (cj == 0.0 || !(vj > 0.0))
        return 0.0;
    double vf = fc * vj;
    double u = 1.0 - fmin(v, vf) / vj; /* > 0: fc < 1 */
    double q_low;
    if (fabs(1.0 - m) < 1e-9)
        q_low = -cj * vj * log(u);
    else
        q_low = cj * vj * (1.0 - pow(u, 1.0 - m)) / (1.0 - m);
    if (v < vf) {
        *cap = cj * pow(u, -m);
        return q_low;
    }
    double f2 = pow(1.0 - fc, 1.0 + m), f3 = 1.0 - fc * (1.0 + m);
    *cap = cj / f2 * (f3 + m * v / vj);
    return q_low + cj / f2 * (f3 * (v - vf) + 0.5 * m / vj * (v * v - vf * vf));
}

/* Silicon band gap after Varshni 1967 (docs/models.md), eV. */
static inline double junction_eg_ev(double temp_k)
{
    return 1.16 - 7.02e-4 * temp_k * temp_k / (temp_k + 1108.0);
}

/* Temperature of a junction potential and its zero-bias capacitance (docs/models.md section 4;
 * Getreu 1976, EG(T) of Varshni 1967), r = T/TNOM:
 *   VJ(T) = VJ r - 3 Vt ln r - EG(TNOM) r + EG(T)
 *   CJ(T) = CJ (1 + M (4e-4 (T - TNOM) - VJ(T)/VJ + 1)) */
static inline void junction_temp_vj_cj(double vj, double cj, double m, double temp_k,
                                       double tnom_k, double vt_v, double *vj_t, double *cj_t)
{
    double r = temp_k / tnom_k;
    double vjt = vj * r - 3.0 * vt_v * log(r) - junction_eg_ev(tnom_k) * r + junction_eg_ev(temp_k);
    *vj_t = vjt;
    *cj_t = cj * (1.0 + m * (4e-4 * (temp_k - tnom_k) - vjt / vj + 1.0));
}

#endif
