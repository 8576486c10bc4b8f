/* stillhook simulator kernel: classical RK4 through each drive cycle, for a batch of runs.
 *
 * Compiled at first use by stillhook.sim.kernel (cffi, ABI mode) after the right-hand side that
 * stillhook.sim.equations generates from its equation text (shk_rhs_double, shk_rhs_single).
 * The numpy engine in stillhook.sim.stepping does the same arithmetic in the same order; the
 * tests compare the two.
 *
 * Run r: rig constants par[5r .. 5r+4] = m1, m2, L2, g, zeta; single[r] selects the single-
 * pendulum equations; n_rk[r] RK4 steps per cycle (a multiple of sub); the state is recorded
 * every n_rk[r] / sub steps (sub output samples per cycle) into Y[4 (out_off[r] + j)], j < n_out[r].
 * Trolley acceleration over cycle k: tr_a[tr_off[r] + k], k < tr_n[r]; rope length ho_L0[r] + ho_L,
 * rate ho_v and acceleration ho_a at the start of cycle k at ho_off[r] + k, k < ho_n[r] (the tables
 * hold the change from the start, shared by runs of different start lengths). Past the end of a
 * table its last cycle is held. y0[4r ..] = theta1, theta2, theta1', theta2'.
 *
 * Floating point: build with -O2 -ffp-contract=off and without -ffast-math, so that the result
 * does not depend on the optimizer fusing multiply-adds.
 */
#include <stdint.h>

static void shk_rhs(int64_t single, const double *y, double a, double L1, double L1d, double L1dd,
                    const double *p, double *dy)
{
    if (single) {
        shk_rhs_single(y[0], y[1], y[2], y[3], a, L1, L1d, L1dd, p[0], p[1], p[2], p[3], p[4],
                       &dy[0], &dy[1], &dy[2], &dy[3]);
    } else {
        shk_rhs_double(y[0], y[1], y[2], y[3], a, L1, L1d, L1dd, p[0], p[1], p[2], p[3], p[4],
                       &dy[0], &dy[1], &dy[2], &dy[3]);
    }
}

void shk_sim_batch(int64_t n_runs, double cycle_s, int64_t sub, const double *par, const int64_t *single,
                   const int64_t *n_rk, const int64_t *n_out, const int64_t *out_off,
                   const double *tr_a, const int64_t *tr_off, const int64_t *tr_n, const double *ho_L0,
                   const double *ho_L, const double *ho_v, const double *ho_a, const int64_t *ho_off,
                   const int64_t *ho_n, const double *y0, double *Y)
{
    for (int64_t r = 0; r < n_runs; ++r) {
        const double *p = par + 5 * r;
        const int64_t nrk = n_rk[r], stride = nrk / sub, steps = (n_out[r] - 1) * stride;
        const double h = cycle_s / (double)nrk;
        double y[4], k1[4], k2[4], k3[4], k4[4], z[4];
        double *out = Y + 4 * out_off[r];
        for (int i = 0; i < 4; ++i) {
            y[i] = y0[4 * r + i];
        }
        for (int64_t s = 0;; ++s) {
            if (s % stride == 0) {
                for (int i = 0; i < 4; ++i) {
                    out[4 * (s / stride) + i] = y[i];
                }
            }
            if (s == steps) {
                break;
            }
            const int64_t k = s / nrk;
            const int64_t kt = tr_off[r] + (k < tr_n[r] ? k : tr_n[r] - 1);
            const int64_t kh = ho_off[r] + (k < ho_n[r] ? k : ho_n[r] - 1);
            const double a = tr_a[kt], L = ho_L0[r] + ho_L[kh], u = ho_v[kh], al = ho_a[kh];
            const double tau0 = (double)(s % nrk) * h, tau1 = tau0 + 0.5 * h, tau2 = tau0 + h;
            shk_rhs(single[r], y, a, L + u * tau0 + 0.5 * al * tau0 * tau0, u + al * tau0, al, p, k1);
            for (int i = 0; i < 4; ++i) {
                z[i] = y[i] + 0.5 * h * k1[i];
            }
            shk_rhs(single[r], z, a, L + u * tau1 + 0.5 * al * tau1 * tau1, u + al * tau1, al, p, k2);
            for (int i = 0; i < 4; ++i) {
                z[i] = y[i] + 0.5 * h * k2[i];
            }
            shk_rhs(single[r], z, a, L + u * tau1 + 0.5 * al * tau1 * tau1, u + al * tau1, al, p, k3);
            for (int i = 0; i < 4; ++i) {
                z[i] = y[i] + h * k3[i];
            }
            shk_rhs(single[r], z, a, L + u * tau2 + 0.5 * al * tau2 * tau2, u + al * tau2, al, p, k4);
            for (int i = 0; i < 4; ++i) {
                y[i] = y[i] + h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
            }
        }
    }
}

/* Cascade of biquads (second-order sections), direct form II transposed, zero initial state.
 *
 * Section s: sos[6s .. 6s+5] = b0, b1, b2, a0 (= 1), a1, a2; the input of section s is the output of
 * section s - 1. Per sample k of one section, with x its input and y its output:
 *     y[k]  = b0 x[k] + z0
 *     z0    = (b1 x[k] - a1 y[k]) + z1
 *     z1    = b2 x[k] - a2 y[k]
 * the operations of scipy.signal.sosfilt in its order. The sections run one after the other over the
 * whole signal (in place in y): the same numbers as sample by sample through all sections.
 */
void shk_sos_filter(int64_t n_sections, const double *sos, int64_t n, const double *x, double *y)
{
    for (int64_t k = 0; k < n; ++k) {
        y[k] = x[k];
    }
    for (int64_t s = 0; s < n_sections; ++s) {
        const double b0 = sos[6 * s], b1 = sos[6 * s + 1], b2 = sos[6 * s + 2];
        const double a1 = sos[6 * s + 4], a2 = sos[6 * s + 5];
        double z0 = 0.0, z1 = 0.0;
        for (int64_t k = 0; k < n; ++k) {
            const double xk = y[k];
            const double yk = b0 * xk + z0;
            z0 = b1 * xk - a1 * yk + z1;
            z1 = b2 * xk - a2 * yk;
            y[k] = yk;
        }
    }
}
