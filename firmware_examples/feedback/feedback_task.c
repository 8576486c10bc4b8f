/*
 * feedback_task.c - shaper + sway feedback in a drive's cyclic task, run on a recorded log (host).
 *
 * Every drive cycle:  speed_ref (Q15, 16384 = 100 % of rated speed) --shaper--> shaped (Q15)
 *                     shaped x 2^16 = Q31 of the same full scale (2 x rated speed = FS_v of the feedback)
 *                     --feedback (rope length, inclinometer reading, its sequence number)--> command (Q31)
 * The shaper and the feedback use their own rope-length schedules (sway_schedule, sway_feedback_schedule).
 * A feedback status with SHK_FB_OFF set means the sensor failed: the command is the shaped reference
 * alone, and a real drive must show the operator that sway feedback is off.
 *
 * Input (stdin): CSV lines "speed_ref,rope_counts,sensor_q31,sensor_seq" after '#' comment lines.
 * Output (stdout): "shaped,command,status" per cycle.
 */
#include <stdio.h>
#include <stdlib.h>

#include "sway_feedback.h"
#include "sway_tables.h"

static int32_t ring[SWAY_RING_LEN];

int main(void)
{
    static shk_shaper_q15_t shaper;
    static shk_feedback_t fb;
    char line[256];
    if (shk_shaper_q15_init(&shaper, &sway_shaper_table, ring, SWAY_RING_LEN) != SHK_OK
        || shk_feedback_init(&fb, &sway_feedback_table) != SHK_OK) {
        fprintf(stderr, "tables rejected\n");
        return 1;
    }
    while (fgets(line, (int)sizeof line, stdin) != NULL) {
        long ref;
        unsigned long rope;
        long sensor;
        unsigned long seq;
        uint32_t row = 0u;
        int16_t shaped;
        int32_t command = 0;
        shk_status_t st;
        if (line[0] == '#') {
            continue;
        }
        if (sscanf(line, "%ld,%lu,%ld,%lu", &ref, &rope, &sensor, &seq) != 4) {
            fprintf(stderr, "bad line: %s", line);
            return 1;
        }
        (void)shk_schedule_lookup(&sway_schedule, (uint32_t)rope, &row);
        (void)shk_shaper_q15_select(&shaper, row);
        shaped = shk_shaper_q15_step(&shaper, (int16_t)ref);
        st = shk_feedback_step(&fb, (uint32_t)rope, (int32_t)sensor, (uint32_t)seq, (int32_t)shaped * 65536,
                               &command);
        printf("%d,%ld,%lu\n", (int)shaped, (long)command, (unsigned long)st);
    }
    return 0;
}
