/* shk_shaper.c - impulse-sequence command shaper, Q15 and Q31. Contracts in shk_shaper.h. */
#include "shk_shaper.h"

#include <stddef.h>

/* Ring index of the sample d cycles old, given the newest at head (d < len). */
static uint32_t shk_ring_index(uint32_t head, uint32_t d, uint32_t len)
{
    return (d <= head) ? (head - d) : (head + len - d);
}

/* Table checks shared by both formats (amplitude sums are checked per format). */
static shk_status_t shk_check_taps(uint32_t n_rows, uint32_t stride, uint32_t history_len,
                                   const uint32_t *n_taps, const uint32_t *delays)
{
    uint32_t r;
    uint32_t i;
    if (n_taps == NULL || delays == NULL || n_rows == 0u || history_len == 0u ||
        stride == 0u || stride > SHK_SHAPER_MAX_TAPS) {
        return SHK_ERR_TABLE;
    }
    for (r = 0u; r < n_rows; ++r) {
        if (n_taps[r] == 0u || n_taps[r] > stride) {
            return SHK_ERR_TABLE;
        }
        for (i = 0u; i < n_taps[r]; ++i) {
            if (delays[r * stride + i] >= history_len) {
                return SHK_ERR_TABLE;
            }
        }
    }
    return SHK_OK;
}

shk_status_t shk_shaper_q15_init(shk_shaper_q15_t *s, const shk_shaper_q15_table_t *table,
                                 int16_t *history, uint32_t history_len)
{
    uint32_t r;
    uint32_t i;
    if (s == NULL || table == NULL || history == NULL || history_len < table->history_len) {
        return SHK_ERR_ARGUMENT;
    }
    if (table->amplitudes == NULL ||
        shk_check_taps(table->n_rows, table->taps_stride, table->history_len, table->n_taps,
                       table->delays) != SHK_OK) {
        return SHK_ERR_TABLE;
    }
    for (r = 0u; r < table->n_rows; ++r) {
        int64_t sum = 0;
        for (i = 0u; i < table->n_taps[r]; ++i) {
            int32_t a = table->amplitudes[r * table->taps_stride + i];
            if (a > 32768 || a < -32768) {
                return SHK_ERR_TABLE;
            }
            sum += a;
        }
        if (sum != 32768) {
            return SHK_ERR_TABLE;
        }
    }
    for (i = 0u; i < table->history_len; ++i) {
        history[i] = 0;
    }
    s->table = table;
    s->history = history;
    s->head = 0u;
    s->row = 0u;
    return SHK_OK;
}

shk_status_t shk_shaper_q31_init(shk_shaper_q31_t *s, const shk_shaper_q31_table_t *table,
                                 int32_t *history, uint32_t history_len)
{
    uint32_t r;
    uint32_t i;
    if (s == NULL || table == NULL || history == NULL || history_len < table->history_len) {
        return SHK_ERR_ARGUMENT;
    }
    if (table->amplitudes == NULL ||
        shk_check_taps(table->n_rows, table->taps_stride, table->history_len, table->n_taps,
                       table->delays) != SHK_OK) {
        return SHK_ERR_TABLE;
    }
    for (r = 0u; r < table->n_rows; ++r) {
        int64_t sum = 0;
        for (i = 0u; i < table->n_taps[r]; ++i) {
            int64_t a = table->amplitudes[r * table->taps_stride + i];
            if (a > INT64_C(2147483648) || a < -INT64_C(2147483648)) {
                return SHK_ERR_TABLE;
            }
            sum += a;
        }
        if (sum != INT64_C(2147483648)) {
            return SHK_ERR_TABLE;
        }
    }
    for (i = 0u; i < table->history_len; ++i) {
        history[i] = 0;
    }
    s->table = table;
    s->history = history;
    s->head = 0u;
    s->row = 0u;
    return SHK_OK;
}

shk_status_t shk_shaper_q15_select(shk_shaper_q15_t *s, uint32_t row)
{
    if (s == NULL || s->table == NULL || row >= s->table->n_rows) {
        return SHK_ERR_ARGUMENT;
    }
    s->row = row;
    return SHK_OK;
}

shk_status_t shk_shaper_q31_select(shk_shaper_q31_t *s, uint32_t row)
{
    if (s == NULL || s->table == NULL || row >= s->table->n_rows) {
        return SHK_ERR_ARGUMENT;
    }
    s->row = row;
    return SHK_OK;
}

int16_t shk_shaper_q15_step(shk_shaper_q15_t *s, int16_t x)
{
    const shk_shaper_q15_table_t *t = s->table;
    const uint32_t base = s->row * t->taps_stride;
    const uint32_t n = t->n_taps[s->row];
    int64_t acc = 0;
    uint32_t i;
    s->head = (s->head + 1u < t->history_len) ? s->head + 1u : 0u;
    s->history[s->head] = x;
    for (i = 0u; i < n; ++i) {
        uint32_t k = shk_ring_index(s->head, t->delays[base + i], t->history_len);
        /* |A| <= 2^15, |x| <= 2^15: each product is exact in int32_t range */
        acc += (int64_t)t->amplitudes[base + i] * (int64_t)s->history[k];
    }
    return shk_sat16(shk_round_shift64(acc, 15u));
}

int32_t shk_shaper_q31_step(shk_shaper_q31_t *s, int32_t x)
{
    const shk_shaper_q31_table_t *t = s->table;
    const uint32_t base = s->row * t->taps_stride;
    const uint32_t n = t->n_taps[s->row];
    int64_t acc_hi = 0;
    int64_t acc_lo = 0;
    uint32_t i;
    s->head = (s->head + 1u < t->history_len) ? s->head + 1u : 0u;
    s->history[s->head] = x;
    for (i = 0u; i < n; ++i) {
        uint32_t k = shk_ring_index(s->head, t->delays[base + i], t->history_len);
        int64_t a = t->amplitudes[base + i];
        int32_t v = s->history[k];
        /* x = hi * 2^16 + lo: |A * hi| <= 2^46, 0 <= lo < 2^16 so |A * lo| < 2^47 */
        acc_hi += a * (int64_t)shk_split_hi(v);
        acc_lo += a * (int64_t)shk_split_lo(v);
    }
    return shk_finish_split(acc_hi, acc_lo, 31u);
}

void shk_shaper_q15_block(shk_shaper_q15_t *s, const int16_t *x, int16_t *y, uint32_t n)
{
    uint32_t k;
    for (k = 0u; k < n; ++k) {
        y[k] = shk_shaper_q15_step(s, x[k]);
    }
}

void shk_shaper_q31_block(shk_shaper_q31_t *s, const int32_t *x, int32_t *y, uint32_t n)
{
    uint32_t k;
    for (k = 0u; k < n; ++k) {
        y[k] = shk_shaper_q31_step(s, x[k]);
    }
}
