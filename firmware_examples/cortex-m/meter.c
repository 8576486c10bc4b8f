/* meter.c - SysTick as an instruction meter under qemu -icount shift=0 (see meter.h). */
#include "meter.h"

#include "board.h"

/* The calibration block: 1 + CAL_LOOPS * (CAL_NOPS + 2) instructions (movs, then nops, subs,
 * bne per pass). */
#define CAL_LOOPS 2000u
#define CAL_NOPS 98u

void meter_start(void)
{
    SYST_CSR = 0u;
    SYST_RVR = SYST_MAX_RELOAD;
    SYST_CVR = 0u; /* any write clears the counter; it reloads on the next tick */
    SYST_CSR = SYST_CSR_ENABLE | SYST_CSR_CLKSOURCE;
    while (SYST_CVR == 0u) {
        /* wait for the reload */
    }
}

uint32_t meter_now(void)
{
    return SYST_CVR;
}

uint32_t meter_ticks(uint32_t start, uint32_t end)
{
    return (start - end) & SYST_MAX_RELOAD;
}

int meter_calibrate(uint32_t *instructions, uint32_t *ticks)
{
    uint32_t t0;
    uint32_t t1;
    uint32_t expected;
    meter_start();
    t0 = meter_now();
    __asm__ volatile("movs r3, #250\n"
                     "lsls r3, r3, #3\n" /* r3 = 2000 = CAL_LOOPS */
                     "1:\n"
                     ".rept 98\n" /* CAL_NOPS */
                     "nop\n"
                     ".endr\n"
                     "subs r3, r3, #1\n"
                     "bne 1b\n"
                     :
                     :
                     : "r3", "cc", "memory");
    t1 = meter_now();
    *instructions = 2u + CAL_LOOPS * (CAL_NOPS + 2u);
    *ticks = meter_ticks(t0, t1);
    /* the two meter reads add a few instructions: allow one tick either way */
    expected = *instructions / METER_INSTR_PER_TICK;
    return (*ticks + 1u >= expected && *ticks <= expected + 1u) ? 1 : 0;
}
