/*
 * shk_shaper.h - command shaper (impulse sequence) with a rope-length schedule, Q15 and Q31.
 *
 * SCATTER FORM. Each new command sample is spread, with the row selected WHEN IT ARRIVES, into a
 * caller-owned ring of future-output accumulators; each cycle's output is taken from its own slot.
 * Per drive cycle n, with the selected row r, input x = x[n], F = 15 (Q15) or 31 (Q31), S = 7:
 *
 *   scatter  p_i = A[r][i] * x                         exact product
 *            q_i = floor((p_i + 2^(S-1)) / 2^S)        slot part, units 2^-(F-S) LSB
 *            ring[(n + d[r][i]) mod N] += q_i
 *            e  += p_i - 2^S q_i                       the bits below the slot grid, at once
 *   output   v = 2^S ring[n mod N] + e
 *            y = floor((v + 2^(F-1)) / 2^F)            round half up
 *            e = v - 2^F y                             remainder carried to the next cycle
 *            ring[n mod N] = 0;  return sat(y)
 *
 * x is the command (e.g. the trolley speed reference as a fraction of full scale), d[r][i] whole-
 * cycle delays (0 <= d < ring_len = N), A[r][i] the impulse amplitudes. Samples before init count
 * as zero.
 *
 * Exact distance. Every row's amplitudes sum exactly to 2^F, so each sample puts exactly 2^F x into
 * (2^S * ring + e), whatever its row; the output moves it into 2^F y + e. Once the command has been
 * zero for N cycles the ring is empty and e = 2^F (sum x - sum y) lies in [-2^(F-1), 2^(F-1)), so
 * e = 0 and sum y = sum x EXACTLY: the shaped move ends at the commanded position to the LSB,
 * whatever row switches happened - provided no output saturated (see Saturation).
 *
 * Accuracy. With the row held fixed each output is within 1 + (K - 1) 2^(S-F) LSB of the exact
 * shaper sum_i A_i x[n - d_i] / 2^F (K taps; Q15: 1 + (K-1)/256, Q31: 1 + (K-1)/2^24). Plain
 * per-sample rounding would be within 1/2 LSB per sample but lets the errors add up; here the
 * running sum of the errors (the position error) stays within 1/2 LSB-cycle plus 2^(S-1-F) per
 * delayed part in flight, and is zero at rest. (Proof: stillhook.fixedpoint_shaper.)
 *
 * Row switches (rope length changed): call shk_shaper_*_select between steps. Samples already in
 * the ring keep the row they arrived with; new samples use the new row. So every sample is shaped
 * by one complete, unity-gain row (nothing is counted twice or skipped), and the distance stays
 * exact. While the command is moving, the output shows a short transient as the shaper's mean delay
 * changes (the trolley catches up or falls back by speed x the change of mean delay).
 *
 * Fixed-point contract
 *   Samples      Q15: int16_t in [-32768, 32767]; Q31: int32_t, full range accepted.
 *   Amplitudes   stored ONE WIDTH UP so that 1.0 is representable: Q15 rows are int32_t in
 *                units of 2^-15, Q31 rows int64_t in units of 2^-31, each |A| <= 2^F.
 *                Each row's amplitudes sum EXACTLY to 2^F (unity DC gain).
 *   Products     Q15: int32_t (|A x| <= 2^30); Q31: int64_t (|A x| <= 2^62). Exact.
 *   Ring slots   Q15: int32_t, Q31: int64_t, units 2^-(F-S) LSB (2^-8 / 2^-24 LSB). A slot can
 *                collect parts of every row under arbitrary switching, so init and the generator
 *                require, with W = sum of |A| over ALL rows and taps (units 2^-F):
 *                    (W + 1) 2^(F-S) + ceil(taps_stride / 2) <= INT32_MAX (Q15) / INT64_MAX (Q31)
 *                (W below about 256 x full scale; SHK_SHAPER_Q15/Q31_ABS_SUM_LIMIT below). Then no
 *                slot, and no intermediate of the output step, can overflow for any input and any
 *                sequence of selected rows.
 *   Remainder    e: int32_t, in [-2^(F-1), 2^(F-1)) between steps, units 2^-F LSB.
 *   Rounding     slot parts and outputs round half up (toward +infinity); nothing is discarded.
 *   Saturation   y is clamped to the sample range and `clipped` counts it; e keeps only the
 *                rounding remainder, so the clipped amount is lost and the exact-distance property
 *                holds only while clipped == 0. Clamping can occur with rows that have negative
 *                amplitudes (sum |A| > 2^F), after row switches (a slot can gather parts of
 *                several rows), and with a fixed row of non-negative amplitudes only when the
 *                exact output is within 1 + (K-1) 2^(S-F) LSB of full scale.
 *   Limits       taps per row <= SHK_SHAPER_MAX_TAPS; 1 <= ring_len <= 2^31; delays < ring_len.
 *
 * Memory: the caller owns the instance struct and the ring (ring_len slots of 4 (Q15) or 8 (Q31)
 * bytes); the tables are const (flash). No malloc. step() costs one multiply, one slot update per
 * tap of the selected row, and a fixed output step.
 */
#ifndef SHK_SHAPER_H
#define SHK_SHAPER_H

#include "shk_fixed.h"

#define SHK_SHAPER_MAX_TAPS 4096u
/* S: bits of each product kept below the ring's slot grid (they go to the remainder at once). */
#define SHK_SHAPER_SLOT_SHIFT 7u

/* Largest W = sum |A| over all rows (units 2^-F) for a given taps_stride: the ring cannot overflow
 * when W <= limit. W <= floor((SLOT_MAX - ceil(stride / 2)) / 2^(F-S)) - 1. */
#define SHK_SHAPER_Q15_ABS_SUM_LIMIT(stride) \
    ((INT64_C(2147483647) - ((int64_t)(stride) + 1) / 2) / INT64_C(256) - 1)
#define SHK_SHAPER_Q31_ABS_SUM_LIMIT(stride) \
    ((INT64_MAX - ((int64_t)(stride) + 1) / 2) / INT64_C(16777216) - 1)

typedef struct {
    uint32_t n_rows;           /* rows, >= 1 */
    uint32_t taps_stride;      /* taps reserved per row in amplitudes[] and delays[] */
    uint32_t ring_len;         /* accumulator slots the caller provides: max delay + 1 */
    const uint32_t *n_taps;    /* [n_rows]: taps used in row r, 1 .. taps_stride */
    const int32_t *amplitudes; /* [n_rows * taps_stride], units 2^-15, row sums = 32768 */
    const uint32_t *delays;    /* [n_rows * taps_stride], cycles, < ring_len */
} shk_shaper_q15_table_t;

typedef struct {
    uint32_t n_rows;
    uint32_t taps_stride;
    uint32_t ring_len;
    const uint32_t *n_taps;
    const int64_t *amplitudes; /* units 2^-31, row sums = 2147483648 */
    const uint32_t *delays;
} shk_shaper_q31_table_t;

typedef struct {
    const shk_shaper_q15_table_t *table;
    int32_t *ring;      /* caller-owned accumulator ring, table->ring_len slots */
    uint32_t head;      /* slot of the current cycle */
    uint32_t row;       /* selected row (applies to the next input sample) */
    int32_t remainder;  /* e, units 2^-15 LSB, in [-2^14, 2^14) between steps */
    uint32_t clipped;   /* outputs clamped since init (stops at UINT32_MAX) */
} shk_shaper_q15_t;

typedef struct {
    const shk_shaper_q31_table_t *table;
    int64_t *ring;      /* caller-owned accumulator ring, table->ring_len slots */
    uint32_t head;
    uint32_t row;
    int32_t remainder;  /* e, units 2^-31 LSB, in [-2^30, 2^30) between steps */
    uint32_t clipped;
} shk_shaper_q31_t;

/* Check the table (taps, delays, amplitude sums, ring capacity), zero the ring and the remainder,
 * select row 0. ring_len is the length of `ring` in slots; it must be >= table->ring_len.
 * Returns SHK_OK, SHK_ERR_ARGUMENT or SHK_ERR_TABLE (then the instance is unusable). */
shk_status_t shk_shaper_q15_init(shk_shaper_q15_t *s, const shk_shaper_q15_table_t *table,
                                 int32_t *ring, uint32_t ring_len);
shk_status_t shk_shaper_q31_init(shk_shaper_q31_t *s, const shk_shaper_q31_table_t *table,
                                 int64_t *ring, uint32_t ring_len);

/* Select the row used for the samples of the next steps. Returns SHK_OK, or SHK_ERR_ARGUMENT
 * (row kept) when row >= n_rows. */
shk_status_t shk_shaper_q15_select(shk_shaper_q15_t *s, uint32_t row);
shk_status_t shk_shaper_q31_select(shk_shaper_q31_t *s, uint32_t row);

/* One drive cycle: spread x with the selected row, return this cycle's shaped output. */
int16_t shk_shaper_q15_step(shk_shaper_q15_t *s, int16_t x);
int32_t shk_shaper_q31_step(shk_shaper_q31_t *s, int32_t x);

/* n cycles with the selected row: y[k] = step(x[k]). x and y may be the same array. */
void shk_shaper_q15_block(shk_shaper_q15_t *s, const int16_t *x, int16_t *y, uint32_t n);
void shk_shaper_q31_block(shk_shaper_q31_t *s, const int32_t *x, int32_t *y, uint32_t n);

#endif /* SHK_SHAPER_H */
