/*
 * startup.c - vector table and reset handler for a Cortex-M3 (MPS2 AN385).
 *
 * At reset the core loads SP from word 0 of the vector table and jumps to word 1
 * (fw_reset_handler). The handler copies .data from flash to RAM, zeroes .bss, paints the
 * stack region (so main can report the deepest stack use), calls main, and passes main's
 * return value to the host as the exit status over semihosting.
 */
#include <stdint.h>

#include "semihost.h"
#include "startup.h"

/* Linker script symbols (mps2_an385.ld); only their addresses are meaningful. */
extern uint32_t fw_data_start[];
extern uint32_t fw_data_end[];
extern uint32_t fw_data_load[];
extern uint32_t fw_bss_start[];
extern uint32_t fw_bss_end[];
extern uint32_t fw_stack_limit[];
extern uint32_t fw_stack_top[];

int main(void);
void fw_reset_handler(void) __attribute__((noreturn));
void fw_fault_handler(void) __attribute__((noreturn));
void SysTick_Handler(void);

/* A vector is the initial stack pointer (word 0) or a handler address (all others). */
typedef union {
    void (*handler)(void);
    uint32_t *stack;
} fw_vector_t;

/* Armv7-M exception numbers 0..15; the AN385 peripheral interrupts are not used. */
__attribute__((section(".vectors"), used))
static const fw_vector_t fw_vectors[16] = {
    {.stack = fw_stack_top},        /*  0 initial SP */
    {.handler = fw_reset_handler},  /*  1 Reset */
    {.handler = fw_fault_handler},  /*  2 NMI */
    {.handler = fw_fault_handler},  /*  3 HardFault */
    {.handler = fw_fault_handler},  /*  4 MemManage */
    {.handler = fw_fault_handler},  /*  5 BusFault */
    {.handler = fw_fault_handler},  /*  6 UsageFault */
    {.handler = 0},                 /*  7-10 reserved */
    {.handler = 0},
    {.handler = 0},
    {.handler = 0},
    {.handler = fw_fault_handler},  /* 11 SVCall */
    {.handler = fw_fault_handler},  /* 12 DebugMonitor */
    {.handler = 0},                 /* 13 reserved */
    {.handler = fw_fault_handler},  /* 14 PendSV */
    {.handler = SysTick_Handler},   /* 15 SysTick */
};

/* Words between two linker symbols. Linker symbols are distinct objects to C, so they are
 * compared as addresses (uintptr_t), never as pointers. */
static uint32_t fw_words(const uint32_t *from, const uint32_t *to)
{
    return (uint32_t)(((uintptr_t)to - (uintptr_t)from) / sizeof(uint32_t));
}

void fw_reset_handler(void)
{
    uint32_t i;
    uint32_t n;
    volatile uint32_t *paint = fw_stack_limit;
    uintptr_t sp;
    n = fw_words(fw_data_start, fw_data_end);
    for (i = 0u; i < n; ++i) {
        fw_data_start[i] = fw_data_load[i];
    }
    n = fw_words(fw_bss_start, fw_bss_end);
    for (i = 0u; i < n; ++i) {
        fw_bss_start[i] = 0u;
    }
    /* Paint the stack region up to 64 bytes below the current SP (this function's frame). */
    __asm__ volatile("mov %0, sp" : "=r"(sp));
    n = (uint32_t)((sp - 64u - (uintptr_t)fw_stack_limit) / sizeof(uint32_t));
    for (i = 0u; i < n; ++i) {
        paint[i] = FW_STACK_PAINT;
    }
    semihost_exit((int32_t)main());
}

uint32_t fw_stack_used_bytes(void)
{
    uint32_t n = fw_words(fw_stack_limit, fw_stack_top);
    uint32_t i = 0u;
    while (i < n && fw_stack_limit[i] == FW_STACK_PAINT) {
        ++i;
    }
    return (n - i) * (uint32_t)sizeof(uint32_t);
}

void fw_fault_handler(void)
{
    semihost_put_str("# FAULT: unexpected exception; stopping\n");
    semihost_exit(FW_EXIT_FAULT);
}
