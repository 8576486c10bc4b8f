/* recording.h - the recorded drive inputs, compiled in (recording_data.c is generated from the CSV). */
#ifndef RECORDING_H
#define RECORDING_H

#include <stdint.h>

extern const uint32_t recording_cycles;
extern const int16_t recording_speed_ref[];    /* 16384 = 100 % of rated travel speed */
extern const uint32_t recording_rope_length[]; /* counts of SWAY_ROPE_LSB_NM nm */

#endif /* RECORDING_H */
