/*
 * meter.h - instruction counting with SysTick under qemu's deterministic mode.
 *
 * qemu-system-arm does not model the DWT cycle counter. With `-icount shift=0` every guest
 * instruction advances virtual time by exactly 1 ns, and SysTick (processor clock, 25 MHz on the
 * AN385) counts one tick per 40 ns, that is one tick per METER_INSTR_PER_TICK instructions.
 * meter_calibrate() checks this against a block of known length and says whether the figures
 * are valid (they are not on real silicon, nor in qemu without -icount shift=0).
 *
 * These are INSTRUCTION counts. A real Cortex-M3 takes more cycles than instructions (loads,
 * branches and 64-bit multiplies take 2 or more cycles, plus flash wait states).
 */
#ifndef METER_H
#define METER_H

#include <stdint.h>

#define METER_INSTR_PER_TICK 40u

/* SysTick free-running over its full 24 bits, no interrupt (stops the cyclic pacing). */
void meter_start(void);
uint32_t meter_now(void);
/* Ticks from `start` to `end` (counter counts down; one wrap at most, 2^24 ticks). */
uint32_t meter_ticks(uint32_t start, uint32_t end);
/* 1 if one tick is METER_INSTR_PER_TICK instructions (qemu -icount shift=0), else 0.
 * Writes the calibration block's instructions and ticks. */
int meter_calibrate(uint32_t *instructions, uint32_t *ticks);

#endif /* METER_H */
