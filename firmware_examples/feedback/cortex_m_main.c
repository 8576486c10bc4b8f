/*
 * cortex_m_main.c - shaper + sway feedback per drive cycle on a bare-metal Cortex-M3 (MPS2 AN385 under
 * qemu), run on the recorded sensor log, reporting instructions per step over semihosting.
 *
 * Uses the Cortex-M example's start-up, linker script, semihosting and SysTick meter (../cortex-m/).
 * Per cycle it does what feedback_task.c does on the host (rope-length lookup, shaper select + step,
 * feedback step) and prints the same "shaped,command,status" line, so the output is compared byte
 * for byte with the host's (which is compared with the Python integer reference).
 *
 * Report lines start with '#'. Instruction counts are measured with SysTick under qemu -icount shift=0
 * (1 instruction per ns, one SysTick tick per METER_INSTR_PER_TICK = 40 instructions, see meter.h):
 *   - per cycle, min and max: each part timed on its own in the logged run, to the nearest 40
 *     instructions (one tick);
 *   - mean: the whole log run again in one timed loop per variant, minus the same loop with an empty
 *     call, divided by the cycles (exact to 40 / cycles instructions).
 * These are instruction counts, not CPU cycles: a real Cortex-M3 needs more cycles than instructions
 * (loads, taken branches, 64-bit multiply-accumulates, flash wait states).
 */
#include <stdint.h>

#include "meter.h"
#include "semihost.h"
#include "startup.h"
#include "sway_feedback.h"
#include "sway_tables.h"

#define FW_EXIT_INIT 2

extern const uint32_t log_cycles;
extern const int16_t log_speed_ref[];
extern const uint32_t log_rope_counts[];
extern const int32_t log_sensor_q31[];
extern const uint32_t log_sensor_seq[];

static int32_t fw_ring[SWAY_RING_LEN];
static shk_shaper_q15_t fw_shaper;
static shk_feedback_t fw_fb;
static volatile int32_t fw_sink;

void SysTick_Handler(void)
{
    /* not enabled here: the meter runs SysTick without its interrupt */
}

static shk_status_t fw_init(void)
{
    shk_status_t st = shk_shaper_q15_init(&fw_shaper, &sway_shaper_table, fw_ring, SWAY_RING_LEN);
    return st != SHK_OK ? st : shk_feedback_init(&fw_fb, &sway_feedback_table);
}

/* Cycle k, part 1: the shaper on its rope-length row (as feedback_task.c). */
__attribute__((noinline)) static int32_t shaper_part(uint32_t k)
{
    uint32_t row = 0u;
    (void)shk_schedule_lookup(&sway_schedule, log_rope_counts[k], &row);
    (void)shk_shaper_q15_select(&fw_shaper, row);
    return (int32_t)shk_shaper_q15_step(&fw_shaper, log_speed_ref[k]);
}

/* Cycle k, part 2: the feedback on the shaped reference (Q15 x 2^16 = Q31 of the same full scale). */
__attribute__((noinline)) static shk_status_t feedback_part(uint32_t k, int32_t shaped, int32_t *command)
{
    return shk_feedback_step(&fw_fb, log_rope_counts[k], log_sensor_q31[k], log_sensor_seq[k], shaped * 65536,
                             command);
}

typedef struct {
    uint32_t min_ticks;
    uint32_t max_ticks;
} span_t;

static void span_add(span_t *s, uint32_t ticks)
{
    s->min_ticks = ticks < s->min_ticks ? ticks : s->min_ticks;
    s->max_ticks = ticks > s->max_ticks ? ticks : s->max_ticks;
}

/* value / 100 with two decimals */
static void put_hundredths(uint64_t v100)
{
    semihost_put_uint(v100 / 100u);
    semihost_put_char('.');
    semihost_put_char((char)('0' + (char)((v100 / 10u) % 10u)));
    semihost_put_char((char)('0' + (char)(v100 % 10u)));
}

/* The logged run: one output line per cycle; per-part min / max ticks. */
static void run_log(span_t *shaper, span_t *both, uint32_t *feedback_off)
{
    uint32_t k;
    meter_start();
    for (k = 0u; k < log_cycles; ++k) {
        int32_t command = 0;
        uint32_t t0 = meter_now();
        int32_t shaped = shaper_part(k);
        uint32_t t1 = meter_now();
        shk_status_t st = feedback_part(k, shaped, &command);
        uint32_t t2 = meter_now();
        span_add(shaper, meter_ticks(t0, t1));
        span_add(both, meter_ticks(t0, t2));
        if ((st & SHK_FB_OFF) != 0u) {
            ++*feedback_off; /* a drive shows the operator that sway feedback is off */
        }
        semihost_put_int(shaped);
        semihost_put_char(',');
        semihost_put_int(command);
        semihost_put_char(',');
        semihost_put_uint(st);
        semihost_put_char('\n');
    }
}

typedef enum { VARIANT_EMPTY, VARIANT_SHAPER, VARIANT_BOTH } variant_t;

__attribute__((noinline)) static int32_t empty_part(uint32_t k)
{
    return (int32_t)log_speed_ref[k];
}

/* Ticks for the whole log in one loop: the empty call, the shaper alone, or shaper + feedback. */
static uint32_t time_log(variant_t v)
{
    uint32_t k;
    uint32_t t0;
    uint32_t t1;
    (void)fw_init();
    meter_start();
    t0 = meter_now();
    for (k = 0u; k < log_cycles; ++k) {
        int32_t command = 0;
        if (v == VARIANT_EMPTY) {
            fw_sink = empty_part(k);
        } else if (v == VARIANT_SHAPER) {
            fw_sink = shaper_part(k);
        } else {
            (void)feedback_part(k, shaper_part(k), &command);
            fw_sink = command;
        }
    }
    t1 = meter_now();
    return meter_ticks(t0, t1);
}

static void put_line(const char *what, const span_t *s, uint32_t ticks, uint32_t empty)
{
    semihost_put_str("# cortex-m3: ");
    semihost_put_str(what);
    semihost_put_str(" instructions per cycle: min ");
    semihost_put_uint((uint64_t)s->min_ticks * METER_INSTR_PER_TICK);
    semihost_put_str(" mean ");
    put_hundredths(((uint64_t)(ticks - empty) * METER_INSTR_PER_TICK * 100u) / log_cycles);
    semihost_put_str(" max ");
    semihost_put_uint((uint64_t)s->max_ticks * METER_INSTR_PER_TICK);
    semihost_put_str("\n");
}

int main(void)
{
    span_t shaper = {UINT32_MAX, 0u};
    span_t both = {UINT32_MAX, 0u};
    uint32_t feedback_off = 0u;
    uint32_t cal_instr;
    uint32_t cal_ticks;
    uint32_t empty;
    uint32_t t_shaper;
    uint32_t t_both;
    int icount_ok = meter_calibrate(&cal_instr, &cal_ticks);

    if (fw_init() != SHK_OK) {
        semihost_put_str("# cortex-m3: the emitted tables fail the runtime's checks\n");
        return FW_EXIT_INIT;
    }
    run_log(&shaper, &both, &feedback_off);
    semihost_put_str("# cortex-m3: cycles run: ");
    semihost_put_uint(log_cycles);
    semihost_put_str("\n# cortex-m3: cycles with feedback off (sensor fault): ");
    semihost_put_uint(feedback_off);
    semihost_put_str("\n# cortex-m3: RAM of the feedback instance bytes: ");
    semihost_put_uint(sizeof fw_fb);
    semihost_put_str("\n# cortex-m3: RAM of the shaper instance + ring bytes: ");
    semihost_put_uint(sizeof fw_shaper + sizeof fw_ring);
    semihost_put_str("\n# cortex-m3: stack used bytes: ");
    semihost_put_uint(fw_stack_used_bytes());
    semihost_put_char('\n');
    if (!icount_ok) {
        semihost_put_str("# cortex-m3: SysTick is not counting instructions (run qemu with -icount shift=0); "
                         "no instruction figures\n");
        return 0;
    }
    empty = time_log(VARIANT_EMPTY);
    t_shaper = time_log(VARIANT_SHAPER);
    t_both = time_log(VARIANT_BOTH);
    put_line("shaper alone (lookup, select, step)", &shaper, t_shaper, empty);
    put_line("shaper + feedback", &both, t_both, empty);
    semihost_put_str("# cortex-m3: feedback step alone, mean instructions per cycle: ");
    put_hundredths(((uint64_t)(t_both - t_shaper) * METER_INSTR_PER_TICK * 100u) / log_cycles);
    semihost_put_char('\n');
    return 0;
}
