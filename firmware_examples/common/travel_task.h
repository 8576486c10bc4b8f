/*
 * travel_task.h - trolley-travel speed shaping as it sits in a drive's cyclic task.
 *
 * The same file runs in both examples (host/ and cortex-m/). Everything it needs comes from the
 * folder `stillhook emit` writes: sway_tables.h (tables, sizes, format) and the shk_* runtime.
 *
 *   start-up (once, before the cyclic task is enabled):
 *       travel_task_init(&task)         checks the tables, empties the ring, selects row 0
 *   every drive cycle (fixed rate SWAY_CYCLE_NS; one call per cycle, never skipped):
 *       travel_task_cycle(&task, speed_ref, rope_length, &result)
 *
 * Signals
 *   speed_ref    the operator's trolley speed reference after the drive's ramp function, int16_t,
 *                16384 = 100 % of the rated travel speed ([drive] max_speed_m_s), negative = reverse
 *                (the usual fieldbus scaling, e.g. PROFIdrive's N2 normalisation, from memory).
 *                Read as a Q15 fraction this leaves 2x headroom for a shaper that overshoots.
 *   rope_length  measured hoist rope length, uint32_t counts of SWAY_ROPE_LSB_NM nanometres.
 *   result       the shaped speed reference in the emitted sample format (Q15: int16_t, same scaling
 *                as speed_ref; Q31: int32_t, 2^30 = 100 %), the schedule row and the lookup status.
 *
 * Outside the envelope. The runtime clamps the rope length to the designed range, keeps shaping
 * with the end row and returns SHK_CLAMPED_LOW / SHK_CLAMPED_HIGH. The design's sway guarantee does
 * not hold there, so this task acts on the flag: it limits the speed reference to
 * TRAVEL_CREEP_LIMIT (25 % of rated speed) before shaping, and hands the status to the caller to
 * raise a warning. Choose the policy your crane needs (warn, creep, stop); never ignore the flag.
 */
#ifndef TRAVEL_TASK_H
#define TRAVEL_TASK_H

#include <stdint.h>

#include "sway_tables.h"

#if defined(SWAY_FORMAT_Q15)
typedef int16_t travel_sample_t;
typedef int32_t travel_slot_t;
typedef shk_shaper_q15_t travel_shaper_t;
#elif defined(SWAY_FORMAT_Q31)
typedef int32_t travel_sample_t;
typedef int64_t travel_slot_t;
typedef shk_shaper_q31_t travel_shaper_t;
#else
#error "sway_tables.h defines neither SWAY_FORMAT_Q15 nor SWAY_FORMAT_Q31: emit with --prefix sway"
#endif

/* 100 % of rated speed in speed_ref units, and the limit applied outside the envelope. */
#define TRAVEL_SPEED_100PCT 16384
#define TRAVEL_CREEP_LIMIT 4096

typedef struct {
    travel_shaper_t shaper;
    travel_slot_t ring[SWAY_RING_LEN]; /* caller-owned accumulator ring the runtime works in */
} travel_task_t;

typedef struct {
    travel_sample_t speed_out; /* shaped speed reference, sample format (see above) */
    uint32_t row;              /* schedule row used this cycle */
    shk_status_t status;       /* SHK_OK, SHK_CLAMPED_LOW or SHK_CLAMPED_HIGH */
} travel_result_t;

/* Returns SHK_OK, or the runtime's error code (then do not start the cyclic task). */
shk_status_t travel_task_init(travel_task_t *task);

/* One drive cycle. */
void travel_task_cycle(travel_task_t *task, int16_t speed_ref, uint32_t rope_length,
                       travel_result_t *result);

#endif /* TRAVEL_TASK_H */
