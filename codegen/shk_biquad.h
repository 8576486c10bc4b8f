/*
 * shk_biquad.h - cascade of second-order sections, direct form I, Q15 and Q31.
 *
 * Each stage computes, with feedback terms ADDED:
 *     acc  = b0*x[n] + b1*x[n-1] + b2*x[n-2] + a1*y[n-1] + a2*y[n-2]
 *     y[n] = sat( round( acc / 2^(F - post_shift) ) )      F = 15 (Q15) or 31 (Q31)
 * and feeds y to the next stage. The real coefficient is stored * 2^post_shift, so
 * coefficients of magnitude up to 2^post_shift fit (a notch near DC has a1 close to 2:
 * post_shift = 1).
 *
 * Sign convention. scipy / MATLAB write the denominator 1 + a1 z^-1 + a2 z^-2 and SUBTRACT the
 * feedback; here (as in the open-source Arm CMSIS-DSP DF1 biquads) the feedback is added, so
 *     stored a1 = -a1(scipy) / 2^post_shift,   stored a2 = -a2(scipy) / 2^post_shift,
 *     stored bk =  bk(scipy) / 2^post_shift.
 * Coefficient order per stage (same as CMSIS-DSP arm_biquad_cascade_df1_q15 / _q31):
 *     Q15: {b0, 0, b1, b2, a1, a2}   (6 int16_t; the 0 is padding CMSIS uses for dual MACs)
 *     Q31: {b0, b1, b2, a1, a2}      (5 int32_t)
 * State per stage, same order as CMSIS-DSP: {x[n-1], x[n-2], y[n-1], y[n-2]}.
 * So the emitted coefficient arrays and post_shift can be passed unchanged to
 * arm_biquad_cascade_df1_init_q15 / _q31. The outputs need not agree bit for bit: CMSIS-DSP
 * rounds and guards its accumulators its own way (its Q31 accumulator wraps on overflow),
 * while this runtime rounds as below and never overflows.
 *
 * Fixed-point contract
 *   Samples      Q15 int16_t, Q31 int32_t, full range.
 *   Coefficients Q15: int16_t, Q31: int32_t, units 2^-F, real = stored * 2^post_shift.
 *   post_shift   Q15: 0..14, Q31: 0..15.
 *   Accumulator  Q15: int64_t sum of the five exact 16 x 16-bit products (|acc| < 5 * 2^30).
 *                Q31: each state value v is split v = hi * 2^16 + lo and two int64_t sums of
 *                exact products are kept (|each| < 5 * 2^47); nothing is truncated or wraps.
 *   Rounding     round to nearest, ties toward +infinity, once per stage output.
 *   Saturation   each stage output is clamped to the sample range; the clamped value is
 *                what the state remembers (as CMSIS-DSP does).
 *
 * Memory: caller-owned instance and state (4 samples per stage); const coefficients.
 */
#ifndef SHK_BIQUAD_H
#define SHK_BIQUAD_H

#include "shk_fixed.h"

#define SHK_BIQUAD_MAX_STAGES 64u

typedef struct {
    uint32_t n_stages;     /* 1 .. SHK_BIQUAD_MAX_STAGES */
    uint32_t post_shift;   /* 0 .. 14 */
    const int16_t *coeffs; /* [6 * n_stages]: {b0, 0, b1, b2, a1, a2} per stage */
} shk_biquad_q15_table_t;

typedef struct {
    uint32_t n_stages;
    uint32_t post_shift;   /* 0 .. 15 */
    const int32_t *coeffs; /* [5 * n_stages]: {b0, b1, b2, a1, a2} per stage */
} shk_biquad_q31_table_t;

typedef struct {
    const shk_biquad_q15_table_t *table;
    int16_t *state;        /* caller-owned, 4 * n_stages */
} shk_biquad_q15_t;

typedef struct {
    const shk_biquad_q31_table_t *table;
    int32_t *state;
} shk_biquad_q31_t;

/* Check the table, zero the state. state_len is the length of `state` in samples
 * (>= 4 * n_stages). Returns SHK_OK, SHK_ERR_ARGUMENT or SHK_ERR_TABLE. */
shk_status_t shk_biquad_q15_init(shk_biquad_q15_t *f, const shk_biquad_q15_table_t *table,
                                 int16_t *state, uint32_t state_len);
shk_status_t shk_biquad_q31_init(shk_biquad_q31_t *f, const shk_biquad_q31_table_t *table,
                                 int32_t *state, uint32_t state_len);

/* One sample through every stage. */
int16_t shk_biquad_q15_step(shk_biquad_q15_t *f, int16_t x);
int32_t shk_biquad_q31_step(shk_biquad_q31_t *f, int32_t x);

/* n samples; x and y may be the same array. */
void shk_biquad_q15_block(shk_biquad_q15_t *f, const int16_t *x, int16_t *y, uint32_t n);
void shk_biquad_q31_block(shk_biquad_q31_t *f, const int32_t *x, int32_t *y, uint32_t n);

#endif /* SHK_BIQUAD_H */
