/*
 * shk_schedule.h - pick the shaper row for the measured rope length.
 *
 * Input contract
 *   length: the hoist rope length (trolley to hook) as an unsigned count, uint32_t, in the
 *   unit the emitted tables state (<PREFIX>_ROPE_LSB_NM nanometres per count; default
 *   1000000 nm = 1 mm per count). Any uint32_t value is accepted.
 *
 * Rule
 *   The envelope is [length_min, length_max] counts. A length outside it is clamped to the
 *   nearer end and the returned status says so (SHK_CLAMPED_LOW / SHK_CLAMPED_HIGH): the
 *   crane is outside the range the design was made for, and the caller must act on it
 *   (warn, limit speed, refuse the move), not ignore it.
 *   Inside the envelope the row is the number of thresholds at or below the length:
 *       row = #{ k : thresholds[k] <= length },  0 <= row <= n_rows - 1
 *   The generator places the thresholds so that this reproduces the design's own
 *   lookup rule (see the emitted tables header). Binary search: at most 32 iterations.
 */
#ifndef SHK_SCHEDULE_H
#define SHK_SCHEDULE_H

#include "shk_fixed.h"

typedef struct {
    uint32_t n_rows;            /* rows in the schedule, >= 1 */
    uint32_t length_min;        /* envelope lower end, counts */
    uint32_t length_max;        /* envelope upper end, counts, >= length_min */
    const uint32_t *thresholds; /* [n_rows - 1], strictly ascending; NULL when n_rows == 1 */
} shk_schedule_t;

/* Check a schedule table: rows >= 1, thresholds strictly ascending and inside
 * (length_min, length_max]. Returns SHK_OK or SHK_ERR_TABLE / SHK_ERR_ARGUMENT. */
shk_status_t shk_schedule_check(const shk_schedule_t *sched);

/* Look up the row for `length` (counts). Writes the row to *row and returns SHK_OK,
 * SHK_CLAMPED_LOW or SHK_CLAMPED_HIGH (read it!), or SHK_ERR_ARGUMENT for null pointers
 * (then *row is untouched). */
shk_status_t shk_schedule_lookup(const shk_schedule_t *sched, uint32_t length, uint32_t *row);

#endif /* SHK_SCHEDULE_H */
