/* shk_feedback.c - observer + state feedback step. Contracts in shk_feedback.h. */
#include "shk_feedback.h"

#include <stddef.h>

/* fin(c . x, frac): exact dot product through 16-bit halves, one rounding (shk_fixed.h). */
static int32_t shk_fb_dot(const int32_t *c, const int32_t *x, uint32_t n, uint32_t frac)
{
    int64_t acc_hi = 0;
    int64_t acc_lo = 0;
    uint32_t j;
    for (j = 0u; j < n; ++j) {
        acc_hi += (int64_t)c[j] * (int64_t)shk_split_hi(x[j]);
        acc_lo += (int64_t)c[j] * (int64_t)shk_split_lo(x[j]);
    }
    return shk_finish_split(acc_hi, acc_lo, frac);
}

static int shk_fb_frac_ok(uint32_t f)
{
    return f >= 16u && f <= 30u;
}

shk_status_t shk_feedback_init(shk_feedback_t *fb, const shk_feedback_table_t *table)
{
    uint32_t i;
    if (fb == NULL || table == NULL) {
        return SHK_ERR_ARGUMENT;
    }
    fb->table = NULL;
    for (i = 0u; i < SHK_FB_MAX_OBS; ++i) {
        fb->obs[i] = 0;
    }
    fb->dev[0] = 0;
    fb->dev[1] = 0;
    for (i = 0u; i < SHK_FB_MAX_REF; ++i) {
        fb->ref[i] = 0;
    }
    fb->sensor_prev = 0;
    fb->seq_prev = 0u;
    fb->stale = 0u;
    fb->fault = 0u;
    fb->started = 0u;
    if (table->schedule == NULL || shk_schedule_check(table->schedule) != SHK_OK
        || table->n_rows != table->schedule->n_rows || table->n_obs == 0u || table->n_obs > SHK_FB_MAX_OBS
        || !shk_fb_frac_ok(table->frac_o) || !shk_fb_frac_ok(table->frac_u) || !shk_fb_frac_ok(table->frac_v)
        || !shk_fb_frac_ok(table->frac_d) || !shk_fb_frac_ok(table->frac_r) || table->n_ref == 0u
        || table->n_ref > SHK_FB_MAX_REF || table->ref_next == NULL || table->obs_next == NULL || table->du_row == NULL
        || table->vhat_row == NULL || table->drive == NULL || table->speed_max <= 0 || table->accel_room < 0
        || table->sensor_max <= 0 || table->jump_max <= 0 || table->stale_cycles == 0u) {
        return SHK_ERR_TABLE;
    }
    fb->table = table;
    return SHK_OK;
}

static void shk_fb_check_sensor(shk_feedback_t *fb, int32_t sensor, uint32_t seq)
{
    const shk_feedback_table_t *t = fb->table;
    int64_t y = (int64_t)sensor;
    if (fb->started != 0u) {
        fb->stale = (seq == fb->seq_prev) ? fb->stale + 1u : 0u;
        if (fb->stale >= t->stale_cycles) {
            fb->fault |= SHK_FB_STALE;
        }
        if (seq != fb->seq_prev) {
            int64_t jump = y - (int64_t)fb->sensor_prev;
            if ((jump < 0 ? -jump : jump) > (int64_t)t->jump_max) {
                fb->fault |= SHK_FB_JUMP;
            }
        }
    }
    if ((y < 0 ? -y : y) > (int64_t)t->sensor_max) {
        fb->fault |= SHK_FB_RANGE;
    }
    fb->sensor_prev = sensor;
    fb->seq_prev = seq;
    fb->started = 1u;
}

shk_status_t shk_feedback_step(shk_feedback_t *fb, uint32_t length, int32_t sensor, uint32_t sensor_seq,
                               int32_t reference, int32_t *command)
{
    const shk_feedback_table_t *t;
    int32_t x[SHK_FB_MAX_OBS + 3 + SHK_FB_MAX_REF];
    int32_t obs_new[SHK_FB_MAX_OBS];
    int32_t du;
    int32_t vhat;
    int64_t u;
    int64_t lim;
    uint32_t row = 0u;
    uint32_t n;
    uint32_t i;
    shk_status_t status;
    if (fb == NULL || command == NULL || fb->table == NULL) {
        return SHK_ERR_ARGUMENT;
    }
    t = fb->table;
    n = t->n_obs;
    status = shk_schedule_lookup(t->schedule, length, &row);
    if (fb->fault == 0u) {
        shk_fb_check_sensor(fb, sensor, sensor_seq);
    }
    if (fb->fault != 0u) {
        *command = reference;
        return status | fb->fault;
    }
    /* du from [obs, dev, sensor]; vhat from [obs, sensor] */
    for (i = 0u; i < n; ++i) {
        x[i] = fb->obs[i];
    }
    x[n] = fb->dev[0];
    x[n + 1u] = fb->dev[1];
    x[n + 2u] = sensor;
    for (i = 0u; i < t->n_ref; ++i) {
        x[n + 3u + i] = fb->ref[i];
    }
    du = shk_fb_dot(t->du_row + (size_t)row * (n + 3u + t->n_ref), x, n + 3u + t->n_ref, t->frac_u);
    x[n] = sensor;
    vhat = shk_fb_dot(t->vhat_row + (size_t)row * (n + 1u), x, n + 1u, t->frac_v);
    u = (int64_t)shk_sat32((int64_t)reference + (int64_t)du);
    lim = (int64_t)vhat - (int64_t)t->accel_room;
    u = (u < lim) ? lim : u;
    u = (u < -(int64_t)t->speed_max) ? -(int64_t)t->speed_max : u;
    lim = (int64_t)vhat + (int64_t)t->accel_room;
    u = (u > lim) ? lim : u;
    u = (u > (int64_t)t->speed_max) ? (int64_t)t->speed_max : u;
    if (u != (int64_t)reference + (int64_t)du) {
        status |= SHK_FB_LIMITED;
    }
    /* observer from [obs, sensor, u] (x[n] already holds the sensor) */
    x[n + 1u] = (int32_t)u;
    for (i = 0u; i < n; ++i) {
        obs_new[i] = shk_fb_dot(t->obs_next + ((size_t)row * n + i) * (n + 2u), x, n + 2u, t->frac_o);
    }
    for (i = 0u; i < n; ++i) {
        fb->obs[i] = obs_new[i];
    }
    /* deviation model from [dev, u - reference] */
    x[0] = fb->dev[0];
    x[1] = fb->dev[1];
    x[2] = shk_sat32(u - (int64_t)reference);
    fb->dev[0] = shk_fb_dot(t->drive, x, 3u, t->frac_d);
    fb->dev[1] = shk_fb_dot(t->drive + 3, x, 3u, t->frac_d);
    /* reference model from [ref, reference] */
    for (i = 0u; i < t->n_ref; ++i) {
        x[i] = fb->ref[i];
    }
    x[t->n_ref] = reference;
    for (i = 0u; i < t->n_ref; ++i) {
        obs_new[i] = shk_fb_dot(t->ref_next + ((size_t)row * t->n_ref + i) * (t->n_ref + 1u), x, t->n_ref + 1u,
                                t->frac_r);
    }
    for (i = 0u; i < t->n_ref; ++i) {
        fb->ref[i] = obs_new[i];
    }
    *command = (int32_t)u;
    return status;
}
