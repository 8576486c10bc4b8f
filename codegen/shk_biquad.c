/* shk_biquad.c - DF1 biquad cascade, Q15 and Q31. Contracts in shk_biquad.h. */
#include "shk_biquad.h"

#include <stddef.h>

shk_status_t shk_biquad_q15_init(shk_biquad_q15_t *f, const shk_biquad_q15_table_t *table,
                                 int16_t *state, uint32_t state_len)
{
    uint32_t i;
    if (f == NULL || table == NULL || state == NULL) {
        return SHK_ERR_ARGUMENT;
    }
    if (table->coeffs == NULL || table->n_stages == 0u ||
        table->n_stages > SHK_BIQUAD_MAX_STAGES || table->post_shift > 14u) {
        return SHK_ERR_TABLE;
    }
    if (state_len < 4u * table->n_stages) {
        return SHK_ERR_ARGUMENT;
    }
    for (i = 0u; i < 4u * table->n_stages; ++i) {
        state[i] = 0;
    }
    f->table = table;
    f->state = state;
    return SHK_OK;
}

shk_status_t shk_biquad_q31_init(shk_biquad_q31_t *f, const shk_biquad_q31_table_t *table,
                                 int32_t *state, uint32_t state_len)
{
    uint32_t i;
    if (f == NULL || table == NULL || state == NULL) {
        return SHK_ERR_ARGUMENT;
    }
    if (table->coeffs == NULL || table->n_stages == 0u ||
        table->n_stages > SHK_BIQUAD_MAX_STAGES || table->post_shift > 15u) {
        return SHK_ERR_TABLE;
    }
    if (state_len < 4u * table->n_stages) {
        return SHK_ERR_ARGUMENT;
    }
    for (i = 0u; i < 4u * table->n_stages; ++i) {
        state[i] = 0;
    }
    f->table = table;
    f->state = state;
    return SHK_OK;
}

int16_t shk_biquad_q15_step(shk_biquad_q15_t *f, int16_t x)
{
    const shk_biquad_q15_table_t *t = f->table;
    const uint32_t shift = 15u - t->post_shift;
    int16_t v = x;
    uint32_t k;
    for (k = 0u; k < t->n_stages; ++k) {
        const int16_t *c = &t->coeffs[6u * k];
        int16_t *st = &f->state[4u * k];
        int64_t acc;
        int16_t y;
        /* c = {b0, 0, b1, b2, a1, a2}, st = {x1, x2, y1, y2} */
        acc = (int64_t)((int32_t)c[0] * (int32_t)v);
        acc += (int64_t)((int32_t)c[2] * (int32_t)st[0]);
        acc += (int64_t)((int32_t)c[3] * (int32_t)st[1]);
        acc += (int64_t)((int32_t)c[4] * (int32_t)st[2]);
        acc += (int64_t)((int32_t)c[5] * (int32_t)st[3]);
        y = shk_sat16(shk_round_shift64(acc, shift));
        st[1] = st[0];
        st[0] = v;
        st[3] = st[2];
        st[2] = y;
        v = y;
    }
    return v;
}

int32_t shk_biquad_q31_step(shk_biquad_q31_t *f, int32_t x)
{
    const shk_biquad_q31_table_t *t = f->table;
    const uint32_t shift = 31u - t->post_shift;
    int32_t v = x;
    uint32_t k;
    for (k = 0u; k < t->n_stages; ++k) {
        const int32_t *c = &t->coeffs[5u * k];
        int32_t *st = &f->state[4u * k];
        int64_t acc_hi;
        int64_t acc_lo;
        int32_t y;
        /* c = {b0, b1, b2, a1, a2}, st = {x1, x2, y1, y2}; value = hi * 2^16 + lo */
        acc_hi = (int64_t)c[0] * shk_split_hi(v);
        acc_lo = (int64_t)c[0] * shk_split_lo(v);
        acc_hi += (int64_t)c[1] * shk_split_hi(st[0]);
        acc_lo += (int64_t)c[1] * shk_split_lo(st[0]);
        acc_hi += (int64_t)c[2] * shk_split_hi(st[1]);
        acc_lo += (int64_t)c[2] * shk_split_lo(st[1]);
        acc_hi += (int64_t)c[3] * shk_split_hi(st[2]);
        acc_lo += (int64_t)c[3] * shk_split_lo(st[2]);
        acc_hi += (int64_t)c[4] * shk_split_hi(st[3]);
        acc_lo += (int64_t)c[4] * shk_split_lo(st[3]);
        y = shk_finish_split(acc_hi, acc_lo, shift);
        st[1] = st[0];
        st[0] = v;
        st[3] = st[2];
        st[2] = y;
        v = y;
    }
    return v;
}

void shk_biquad_q15_block(shk_biquad_q15_t *f, const int16_t *x, int16_t *y, uint32_t n)
{
    uint32_t k;
    for (k = 0u; k < n; ++k) {
        y[k] = shk_biquad_q15_step(f, x[k]);
    }
}

void shk_biquad_q31_block(shk_biquad_q31_t *f, const int32_t *x, int32_t *y, uint32_t n)
{
    uint32_t k;
    for (k = 0u; k < n; ++k) {
        y[k] = shk_biquad_q31_step(f, x[k]);
    }
}
