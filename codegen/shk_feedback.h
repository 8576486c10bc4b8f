/*
 * shk_feedback.h - closed-loop sway damping: observer + state feedback, scheduled by rope length.
 *
 * Portable C99, integers only, no malloc, no recursion. The caller owns the instance.
 *
 * Fixed-point contract
 *   Every signal and state is an int32_t "Q31 of its full scale": value = n / 2^31 x FS, with the
 *   full scales stated by the emitted tables (sensor FS_y = 2 x sensor range; speeds FS_v = 2 x max
 *   speed; rig angles, angle rates, the delay line and the position deviation their own FS).
 *   Inputs each cycle:
 *     length     rope length, uint32_t counts, as for shk_schedule_lookup (same thresholds rule)
 *     sensor     the sway reading, int32_t, Q31 of FS_y
 *     sensor_seq incremented by the sensor driver on every NEW reading (any wrap-around is fine)
 *     reference  the operator's (shaped) speed command, int32_t, Q31 of FS_v
 *   Output: *command, the speed command for the drive, Q31 of FS_v, always within +-speed_max.
 *   Tables: each output is one dot product of int32_t coefficients in Q(frac) with the stored
 *   state and the cycle's inputs, 16 <= frac <= 30:
 *     du   = fin(du_row[row]   . [obs, dev, sensor, ref], frac_u)
 *     vhat = fin(vhat_row[row] . [obs, sensor],           frac_v)
 *     u    = min(max(sat32(reference + du), vhat - accel_room, -speed_max), vhat + accel_room, speed_max)
 *     obs  = fin(obs_next[row] . [obs, sensor, u],        frac_o)   (n_obs rows, from the OLD obs)
 *     dev  = fin(drive . [dev, sat32(u - reference)],     frac_d)   (2 rows)
 *     ref  = fin(ref_next[row] . [ref, reference],        frac_r)   (n_ref rows, from the OLD ref)
 *   ref is the model of the shaped move's own sway (rig states and trolley speed, driven by the
 *   reference alone): the gain acts on the deviation of the estimated sway from it, so the feedback
 *   damps what the shaper did not plan (a released load, a gust, a model error) and leaves the shaped
 *   move alone. Tables emitted for use without a shaper hold zeros there (ref stays 0).
 *   fin(acc, F) = sat32(round(acc / 2^F)), ties toward +infinity, on the EXACT sum: each state is split
 *   into 16-bit halves (shk_split_hi/lo), so |partial sums| < 2^52 and shk_finish_split rounds once.
 *   Limits and anti-windup: u respects the speed limit and the acceleration limit of the drive's speed
 *   loop (|u - vhat| <= accel_room = max_accel x tau); the observer and the deviation model are fed
 *   the command actually output, so no state winds up when a limit acts (status SHK_FB_LIMITED).
 *
 * Fault path (latched until shk_feedback_init): from the second call on, no new reading for
 *   stale_cycles cycles (SHK_FB_STALE), a new reading that moved more than jump_max from the last
 *   (SHK_FB_JUMP), and on every call |sensor| > sensor_max (SHK_FB_RANGE) switch the feedback OFF:
 *   *command = reference (the shaper alone) and the status carries the reason on every later call.
 *   The status also carries the schedule's SHK_CLAMPED_LOW / SHK_CLAMPED_HIGH. A FAULT BIT MUST BE
 *   SHOWN TO THE OPERATOR: the crane then runs without sway feedback.
 *
 * Python integer reference: stillhook.firmware.feedback_model (bit for bit).
 */
#ifndef SHK_FEEDBACK_H
#define SHK_FEEDBACK_H

#include "shk_fixed.h"
#include "shk_schedule.h"

/* Version of the feedback block's contract; emitted feedback tables check it. */
#define SHK_FEEDBACK_VERSION 2
/* Largest observer (rig states + trolley speed + sensor delay line). */
#define SHK_FB_MAX_OBS 16
/* Largest reference model (rig states + trolley speed). */
#define SHK_FB_MAX_REF 8

#define SHK_FB_RANGE   0x10u /* sensor reading beyond sensor_max: feedback off */
#define SHK_FB_STALE   0x20u /* no new sensor reading for stale_cycles cycles: feedback off */
#define SHK_FB_JUMP    0x40u /* new reading jumped more than jump_max: feedback off */
#define SHK_FB_LIMITED 0x80u /* this cycle's correction was cut by the speed or acceleration limit */
#define SHK_FB_OFF (SHK_FB_RANGE | SHK_FB_STALE | SHK_FB_JUMP)

typedef struct {
    uint32_t n_rows;            /* schedule rows, equal to schedule->n_rows */
    uint32_t n_obs;             /* observer states, 1 .. SHK_FB_MAX_OBS */
    uint32_t frac_o;            /* fractions of the four tables, 16 .. 30 */
    uint32_t frac_u;
    uint32_t frac_v;
    uint32_t frac_d;
    uint32_t n_ref;             /* reference-model states, 1 .. SHK_FB_MAX_REF */
    uint32_t frac_r;            /* 16 .. 30 */
    const int32_t *obs_next;    /* [n_rows][n_obs][n_obs + 2] */
    const int32_t *du_row;      /* [n_rows][n_obs + 3 + n_ref] */
    const int32_t *ref_next;    /* [n_rows][n_ref][n_ref + 1] */
    const int32_t *vhat_row;    /* [n_rows][n_obs + 1] */
    const int32_t *drive;       /* [2][3] */
    int32_t speed_max;          /* > 0, Q31 of FS_v */
    int32_t accel_room;         /* >= 0, Q31 of FS_v */
    int32_t sensor_max;         /* > 0, Q31 of FS_y */
    int32_t jump_max;           /* > 0, Q31 of FS_y */
    uint32_t stale_cycles;      /* >= 1 */
    const shk_schedule_t *schedule;
} shk_feedback_table_t;

typedef struct {
    const shk_feedback_table_t *table;
    int32_t obs[SHK_FB_MAX_OBS];
    int32_t dev[2];
    int32_t ref[SHK_FB_MAX_REF];
    int32_t sensor_prev;
    uint32_t seq_prev;
    uint32_t stale;
    uint32_t fault;
    uint32_t started;
} shk_feedback_t;

/* Check `table` and reset `fb` to rest (zero state, no fault). Returns SHK_OK, SHK_ERR_ARGUMENT
 * (null pointer) or SHK_ERR_TABLE (then fb->table is NULL and every step refuses). */
shk_status_t shk_feedback_init(shk_feedback_t *fb, const shk_feedback_table_t *table);

/* One drive cycle (see the contract above). Writes *command and returns the status bits;
 * SHK_ERR_ARGUMENT (null pointer or table not initialised) leaves *command untouched. */
shk_status_t shk_feedback_step(shk_feedback_t *fb, uint32_t length, int32_t sensor, uint32_t sensor_seq,
                               int32_t reference, int32_t *command);

#endif /* SHK_FEEDBACK_H */
