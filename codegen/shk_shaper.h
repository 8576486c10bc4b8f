/*
 * shk_shaper.h - command shaper (impulse sequence) with a rope-length schedule, Q15 and Q31.
 *
 * What it computes, once per drive cycle n, for the selected row r:
 *     y[n] = round( sum_i A[r][i] * x[n - d[r][i]] / 2^F ),   F = 15 (Q15) or 31 (Q31)
 * x is the command (e.g. the trolley speed reference as a fraction of full scale), d[r][i]
 * whole-cycle delays (0 <= d < history_len), A[r][i] the impulse amplitudes. Samples before
 * init count as zero.
 *
 * Fixed-point contract
 *   Samples      Q15: int16_t in [-32768, 32767]; Q31: int32_t, full range accepted.
 *   Amplitudes   stored ONE WIDTH UP so that 1.0 is representable: Q15 rows are int32_t in
 *                units of 2^-15, Q31 rows int64_t in units of 2^-31, each |A| <= 2^F.
 *                Each row's amplitudes sum EXACTLY to 2^F (unity DC gain: a constant input
 *                comes out unchanged, so the shaped move ends at the same position).
 *   Accumulator  Q15: int64_t sum of exact 16 x 32-bit products (|sum| <= taps * 2^30).
 *                Q31: the sample is split x = hi * 2^16 + lo and two int64_t sums of exact
 *                products are kept (|each| < taps * 2^47); the full sum is never truncated.
 *   Rounding     round to nearest, ties toward +infinity, once, at the end.
 *   Saturation   the result is clamped to the sample range (possible only for rows with
 *                negative amplitudes, whose sum of |A| exceeds 2^F).
 *   Limits       taps per row <= SHK_SHAPER_MAX_TAPS; history_len >= max delay + 1.
 *
 * Switching rows (rope length changed): call shk_shaper_*_select between steps. History is
 * shared by all rows, so a switch takes effect at once and never loses samples; every row
 * has unity gain, so a switch while the command is constant changes nothing.
 *
 * Memory: the caller owns the instance struct and the history buffer (history_len samples);
 * the tables are const (flash). No malloc. step() costs taps multiply-accumulates.
 */
#ifndef SHK_SHAPER_H
#define SHK_SHAPER_H

#include "shk_fixed.h"

#define SHK_SHAPER_MAX_TAPS 4096u

typedef struct {
    uint32_t n_rows;           /* rows, >= 1 */
    uint32_t taps_stride;      /* taps reserved per row in amplitudes[] and delays[] */
    uint32_t history_len;      /* history samples the caller provides: max delay + 1 */
    const uint32_t *n_taps;    /* [n_rows]: taps used in row r, 1 .. taps_stride */
    const int32_t *amplitudes; /* [n_rows * taps_stride], units 2^-15, row sums = 32768 */
    const uint32_t *delays;    /* [n_rows * taps_stride], cycles, < history_len */
} shk_shaper_q15_table_t;

typedef struct {
    uint32_t n_rows;
    uint32_t taps_stride;
    uint32_t history_len;
    const uint32_t *n_taps;
    const int64_t *amplitudes; /* units 2^-31, row sums = 2147483648 */
    const uint32_t *delays;
} shk_shaper_q31_table_t;

typedef struct {
    const shk_shaper_q15_table_t *table;
    int16_t *history; /* caller-owned ring buffer, table->history_len samples */
    uint32_t head;    /* index of the newest sample */
    uint32_t row;     /* selected row */
} shk_shaper_q15_t;

typedef struct {
    const shk_shaper_q31_table_t *table;
    int32_t *history;
    uint32_t head;
    uint32_t row;
} shk_shaper_q31_t;

/* Check the table (taps, delays, amplitude sums), zero the history, select row 0.
 * history_len is the length of `history` in samples; it must be >= table->history_len.
 * Returns SHK_OK, SHK_ERR_ARGUMENT or SHK_ERR_TABLE (then the instance is unusable). */
shk_status_t shk_shaper_q15_init(shk_shaper_q15_t *s, const shk_shaper_q15_table_t *table,
                                 int16_t *history, uint32_t history_len);
shk_status_t shk_shaper_q31_init(shk_shaper_q31_t *s, const shk_shaper_q31_table_t *table,
                                 int32_t *history, uint32_t history_len);

/* Select the row used from the next step on. Returns SHK_OK, or SHK_ERR_ARGUMENT (row kept)
 * when row >= n_rows. */
shk_status_t shk_shaper_q15_select(shk_shaper_q15_t *s, uint32_t row);
shk_status_t shk_shaper_q31_select(shk_shaper_q31_t *s, uint32_t row);

/* One drive cycle: push x, return the shaped output. */
int16_t shk_shaper_q15_step(shk_shaper_q15_t *s, int16_t x);
int32_t shk_shaper_q31_step(shk_shaper_q31_t *s, int32_t x);

/* n cycles with the selected row: y[k] = step(x[k]). x and y may be the same array. */
void shk_shaper_q15_block(shk_shaper_q15_t *s, const int16_t *x, int16_t *y, uint32_t n);
void shk_shaper_q31_block(shk_shaper_q31_t *s, const int32_t *x, int32_t *y, uint32_t n);

#endif /* SHK_SHAPER_H */
