/* shk_shaper.c - impulse-sequence command shaper, scatter form, Q15 and Q31. Contracts in shk_shaper.h. */
#include "shk_shaper.h"

#include <stddef.h>

/* u = p + 2^(W-1) + 2^(S-1) as an unsigned W-bit value (W = 32 or 64, |p| <= 2^(W-2)): then
 * q = floor((p + 2^(S-1)) / 2^S) = (u >> S) - 2^(W-1-S) and p - 2^S q = (u mod 2^S) - 2^(S-1),
 * without right-shifting a negative value (implementation-defined in C99 6.5.7). */
#define SHK_SLOT_HALF (UINT32_C(1) << (SHK_SHAPER_SLOT_SHIFT - 1u))
#define SHK_SLOT_MASK ((UINT32_C(1) << SHK_SHAPER_SLOT_SHIFT) - 1u)
#define SHK_SPLIT_BIAS32 (UINT32_C(0x80000000) + SHK_SLOT_HALF)
#define SHK_SPLIT_BIAS64 (UINT64_C(0x8000000000000000) + (uint64_t)SHK_SLOT_HALF)
#define SHK_SPLIT_OFFSET32 ((int32_t)(UINT32_C(0x80000000) >> SHK_SHAPER_SLOT_SHIFT))
#define SHK_SPLIT_OFFSET64 ((int64_t)(UINT64_C(0x8000000000000000) >> SHK_SHAPER_SLOT_SHIFT))

/* Table checks shared by both formats (amplitudes are checked per format). */
static shk_status_t shk_check_taps(uint32_t n_rows, uint32_t stride, uint32_t ring_len,
                                   const uint32_t *n_taps, const uint32_t *delays)
{
    uint32_t r;
    uint32_t i;
    if (n_taps == NULL || delays == NULL || n_rows == 0u || ring_len == 0u ||
        ring_len > UINT32_C(0x80000000) || stride == 0u || stride > SHK_SHAPER_MAX_TAPS) {
        return SHK_ERR_TABLE;
    }
    for (r = 0u; r < n_rows; ++r) {
        if (n_taps[r] == 0u || n_taps[r] > stride) {
            return SHK_ERR_TABLE;
        }
        for (i = 0u; i < n_taps[r]; ++i) {
            if (delays[r * stride + i] >= ring_len) {
                return SHK_ERR_TABLE;
            }
        }
    }
    return SHK_OK;
}

shk_status_t shk_shaper_q15_init(shk_shaper_q15_t *s, const shk_shaper_q15_table_t *table,
                                 int32_t *ring, uint32_t ring_len)
{
    const int64_t limit = (table == NULL) ? 0 : SHK_SHAPER_Q15_ABS_SUM_LIMIT(table->taps_stride);
    int64_t total = 0; /* W = sum |A| over all rows: at most 2^32 * 4096 * 2^15 < 2^63 */
    uint32_t r;
    uint32_t i;
    if (s == NULL || table == NULL || ring == NULL || ring_len < table->ring_len) {
        return SHK_ERR_ARGUMENT;
    }
    if (table->amplitudes == NULL ||
        shk_check_taps(table->n_rows, table->taps_stride, table->ring_len, table->n_taps,
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
            total += (a < 0) ? -(int64_t)a : (int64_t)a;
        }
        if (sum != 32768) {
            return SHK_ERR_TABLE;
        }
    }
    if (total > limit) {
        return SHK_ERR_TABLE; /* the ring could overflow under some sequence of rows */
    }
    for (i = 0u; i < table->ring_len; ++i) {
        ring[i] = 0;
    }
    s->table = table;
    s->ring = ring;
    s->head = 0u;
    s->row = 0u;
    s->remainder = 0;
    s->clipped = 0u;
    return SHK_OK;
}

shk_status_t shk_shaper_q31_init(shk_shaper_q31_t *s, const shk_shaper_q31_table_t *table,
                                 int64_t *ring, uint32_t ring_len)
{
    const int64_t limit = (table == NULL) ? 0 : SHK_SHAPER_Q31_ABS_SUM_LIMIT(table->taps_stride);
    int64_t total = 0; /* stops as soon as it passes limit (< 2^40), so it cannot overflow */
    uint32_t r;
    uint32_t i;
    if (s == NULL || table == NULL || ring == NULL || ring_len < table->ring_len) {
        return SHK_ERR_ARGUMENT;
    }
    if (table->amplitudes == NULL ||
        shk_check_taps(table->n_rows, table->taps_stride, table->ring_len, table->n_taps,
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
            total += (a < 0) ? -a : a;
            if (total > limit) {
                return SHK_ERR_TABLE; /* the ring could overflow under some sequence of rows */
            }
        }
        if (sum != INT64_C(2147483648)) {
            return SHK_ERR_TABLE;
        }
    }
    for (i = 0u; i < table->ring_len; ++i) {
        ring[i] = 0;
    }
    s->table = table;
    s->ring = ring;
    s->head = 0u;
    s->row = 0u;
    s->remainder = 0;
    s->clipped = 0u;
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
    const uint32_t len = t->ring_len;
    const uint32_t head = s->head;
    uint32_t low = 0u; /* sum of (u mod 2^S): at most 4096 * 127 */
    int32_t e;
    int32_t slot;
    int32_t y;
    uint32_t i;
    for (i = 0u; i < n; ++i) {
        uint32_t k = head + t->delays[base + i]; /* < 2^32: head, delay < ring_len <= 2^31 */
        /* p = A x, exact: |A| <= 2^15, |x| <= 2^15 */
        uint32_t u = (uint32_t)(t->amplitudes[base + i] * (int32_t)x) + SHK_SPLIT_BIAS32;
        if (k >= len) {
            k -= len;
        }
        s->ring[k] += (int32_t)(u >> SHK_SHAPER_SLOT_SHIFT) - SHK_SPLIT_OFFSET32;
        low += u & SHK_SLOT_MASK;
    }
    /* e + sum_i (p_i - 2^S q_i): |.| < 2^14 + 4096 * 2^6 */
    e = s->remainder + (int32_t)low - (int32_t)(n * SHK_SLOT_HALF);
    slot = s->ring[head];
    /* y = floor((2^7 slot + e + 2^14) / 2^15) = floor((slot + floor((e + 2^14) / 2^7)) / 2^8);
     * |slot + floor(...)| <= (W + 1) 2^8 + stride / 2 <= INT32_MAX by the init check */
    y = shk_floor_shift32(slot + shk_floor_shift32(e + 16384, SHK_SHAPER_SLOT_SHIFT), 8u);
    /* new e = 2^7 slot + e - 2^15 y = 2^7 (slot - 2^8 y) + e, in [-2^14, 2^14) */
    s->remainder = (slot - y * 256) * 128 + e;
    s->ring[head] = 0;
    s->head = (head + 1u < len) ? head + 1u : 0u;
    if (y > (int32_t)INT16_MAX || y < (int32_t)INT16_MIN) {
        s->clipped += (s->clipped < UINT32_MAX) ? 1u : 0u;
    }
    return shk_sat16((int64_t)y);
}

int32_t shk_shaper_q31_step(shk_shaper_q31_t *s, int32_t x)
{
    const shk_shaper_q31_table_t *t = s->table;
    const uint32_t base = s->row * t->taps_stride;
    const uint32_t n = t->n_taps[s->row];
    const uint32_t len = t->ring_len;
    const uint32_t head = s->head;
    uint32_t low = 0u;
    int64_t e;
    int64_t slot;
    int64_t y;
    uint32_t i;
    for (i = 0u; i < n; ++i) {
        uint32_t k = head + t->delays[base + i];
        /* p = A x, exact: |A| <= 2^31, |x| <= 2^31 */
        uint64_t u = (uint64_t)(t->amplitudes[base + i] * (int64_t)x) + SHK_SPLIT_BIAS64;
        if (k >= len) {
            k -= len;
        }
        s->ring[k] += (int64_t)(u >> SHK_SHAPER_SLOT_SHIFT) - SHK_SPLIT_OFFSET64;
        low += (uint32_t)(u & SHK_SLOT_MASK);
    }
    e = (int64_t)s->remainder + (int64_t)low - (int64_t)n * (int64_t)SHK_SLOT_HALF;
    slot = s->ring[head];
    /* y = floor((slot + floor((e + 2^30) / 2^7)) / 2^24); |slot + ...| <= INT64_MAX by init */
    y = shk_floor_shift64(slot + shk_floor_shift64(e + INT64_C(1073741824), SHK_SHAPER_SLOT_SHIFT), 24u);
    /* new e = 2^7 (slot - 2^24 y) + e, in [-2^30, 2^30) */
    s->remainder = (int32_t)((slot - y * INT64_C(16777216)) * 128 + e);
    s->ring[head] = 0;
    s->head = (head + 1u < len) ? head + 1u : 0u;
    if (y > (int64_t)INT32_MAX || y < (int64_t)INT32_MIN) {
        s->clipped += (s->clipped < UINT32_MAX) ? 1u : 0u;
    }
    return shk_sat32(y);
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
