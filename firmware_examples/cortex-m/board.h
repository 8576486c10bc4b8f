/*
 * board.h - the few Cortex-M3 core registers this example touches (Armv7-M Architecture
 * Reference Manual, System Control Space), and the MPS2 AN385 clock.
 */
#ifndef BOARD_H
#define BOARD_H

#include <stdint.h>

/* AN385 FPGA image: the Cortex-M3 runs from a 25 MHz clock (qemu models the same). */
#define BOARD_CPU_HZ 25000000u

/* SysTick: 24-bit down-counter. CTRL bits: ENABLE, TICKINT (interrupt at 0), CLKSOURCE
 * (1 = processor clock), COUNTFLAG (bit 16, set when the counter reached 0, cleared on read). */
#define SYST_CSR   (*(volatile uint32_t *)0xE000E010u)
#define SYST_RVR   (*(volatile uint32_t *)0xE000E014u)
#define SYST_CVR   (*(volatile uint32_t *)0xE000E018u)
#define SYST_CSR_ENABLE    0x1u
#define SYST_CSR_TICKINT   0x2u
#define SYST_CSR_CLKSOURCE 0x4u
#define SYST_MAX_RELOAD    0x00FFFFFFu

static inline void board_wait_for_interrupt(void)
{
    __asm__ volatile("wfi" ::: "memory");
}

static inline void board_disable_interrupts(void)
{
    __asm__ volatile("cpsid i" ::: "memory");
}

static inline void board_enable_interrupts(void)
{
    __asm__ volatile("cpsie i" ::: "memory");
}

#endif /* BOARD_H */
