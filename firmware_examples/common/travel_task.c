/* travel_task.c - one drive cycle of trolley-travel shaping. Contract in travel_task.h. */
#include "travel_task.h"

#if defined(SWAY_FORMAT_Q15)
#define TRAVEL_INIT shk_shaper_q15_init
#define TRAVEL_SELECT shk_shaper_q15_select
#define TRAVEL_STEP shk_shaper_q15_step
/* speed_ref is already a Q15 sample */
#define TRAVEL_TO_SAMPLE(v) ((travel_sample_t)(v))
#else
#define TRAVEL_INIT shk_shaper_q31_init
#define TRAVEL_SELECT shk_shaper_q31_select
#define TRAVEL_STEP shk_shaper_q31_step
/* Q15 -> Q31 is exact: v * 2^16 (written as a product: left-shifting a negative value is
 * undefined in C99) */
#define TRAVEL_TO_SAMPLE(v) ((travel_sample_t)((int32_t)(v) * 65536))
#endif

shk_status_t travel_task_init(travel_task_t *task)
{
    shk_status_t st = shk_schedule_check(&sway_schedule);
    if (st != SHK_OK) {
        return st;
    }
    return TRAVEL_INIT(&task->shaper, &sway_shaper_table, task->ring, SWAY_RING_LEN);
}

void travel_task_cycle(travel_task_t *task, int16_t speed_ref, uint32_t rope_length,
                       travel_result_t *result)
{
    uint32_t row = 0u;
    int16_t v = speed_ref;
    /* 1. schedule row for the measured rope length; the status MUST be read */
    shk_status_t st = shk_schedule_lookup(&sway_schedule, rope_length, &row);
    if (st != SHK_OK) {
        /* outside the designed envelope: creep speed only (policy of this example) */
        if (v > TRAVEL_CREEP_LIMIT) {
            v = TRAVEL_CREEP_LIMIT;
        } else if (v < -TRAVEL_CREEP_LIMIT) {
            v = -TRAVEL_CREEP_LIMIT;
        }
    }
    /* 2. switch rows between steps: the new row shapes the samples from now on; samples already in
     *    the ring keep the row they arrived with, so the travelled distance stays exact */
    (void)TRAVEL_SELECT(&task->shaper, row);
    /* 3. one shaper step per drive cycle */
    result->speed_out = TRAVEL_STEP(&task->shaper, TRAVEL_TO_SAMPLE(v));
    result->row = row;
    result->status = st;
}
