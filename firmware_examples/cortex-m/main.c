/*
 * cortex-m/main.c - the travel-shaping task on a bare-metal Cortex-M3, paced by SysTick at the
 * drive cycle, replaying the recorded drive inputs and reporting over semihosting.
 *
 * Structure of a real drive firmware, reduced to what matters here:
 *   reset -> start-up code (startup.c) -> main:
 *       travel_task_init()                        once, before the timer starts
 *       SysTick every SWAY_CYCLE_NS               the cycle clock
 *       main loop: wait for the tick, then one travel_task_cycle() per elapsed cycle
 *
 * Cycle overrun. If a cycle's work ever runs past the next tick, the loop finds more than one
 * cycle due and runs the missed ones back to back (catch-up), each with its own recorded input,
 * so the shaper's delays stay counted in real drive cycles and its output is the same sequence,
 * only late. Skipping cycles instead would stretch every impulse delay and detune the shaper. If
 * more than FW_MAX_CYCLES_DUE cycles are ever due, the task is not keeping up at all: it stops
 * with exit status FW_EXIT_OVERRUN (a drive would bring the trolley to a controlled stop).
 *
 * Output (semihosting): the same CSV the host example writes (compared byte for byte), and
 * report lines starting with '#': pacing, overruns, stack, and instruction counts measured
 * with SysTick under qemu -icount shift=0 (see meter.h).
 *
 * Build with -DFW_INJECT_OVERRUN_AT=k to see the catch-up: after cycle k the loop stalls until
 * half-way through cycle k + 2, so cycle k + 1 starts 1.5 cycles late (2 cycles due at once).
 */
#include <stdint.h>

#include "board.h"
#include "meter.h"
#include "recording.h"
#include "semihost.h"
#include "startup.h"
#include "travel_task.h"

#ifndef FW_MAX_CYCLES_DUE
#define FW_MAX_CYCLES_DUE 4u /* at most 3 late cycles are caught up before the task gives up */
#endif
#define FW_EXIT_INIT 2
#define FW_EXIT_OVERRUN 4
#define BENCH_STEPS 1000u

/* SysTick reload for one drive cycle: processor clock ticks per SWAY_CYCLE_NS. */
#define FW_TICKS_PER_CYCLE ((uint32_t)(((uint64_t)SWAY_CYCLE_NS * BOARD_CPU_HZ) / 1000000000u))
SHK_STATIC_ASSERT(((uint64_t)SWAY_CYCLE_NS * BOARD_CPU_HZ) % 1000000000u == 0u, cycle_is_whole_ticks);
SHK_STATIC_ASSERT(FW_TICKS_PER_CYCLE >= 1000u && FW_TICKS_PER_CYCLE - 1u <= SYST_MAX_RELOAD,
                  cycle_fits_systick_24_bits);

static travel_task_t fw_task;
static volatile uint32_t fw_ticks; /* drive cycles started by SysTick since the task began */
static volatile travel_sample_t fw_sink;

void SysTick_Handler(void)
{
    fw_ticks = fw_ticks + 1u;
}

static void put_report(const char *label, uint64_t value)
{
    semihost_put_str(label);
    semihost_put_uint(value);
    semihost_put_char('\n');
}

/* value / 100 with two decimals */
static void put_hundredths(uint64_t v100)
{
    semihost_put_uint(v100 / 100u);
    semihost_put_char('.');
    semihost_put_char((char)('0' + (char)((v100 / 10u) % 10u)));
    semihost_put_char((char)('0' + (char)(v100 % 10u)));
}

static void put_row(uint32_t cycle, const travel_result_t *r)
{
    semihost_put_uint(cycle);
    semihost_put_char(',');
    semihost_put_int(r->speed_out);
    semihost_put_char(',');
    semihost_put_uint(r->row);
    semihost_put_char(',');
    semihost_put_uint(r->status);
    semihost_put_char('\n');
}

/* ---- the cyclic task ------------------------------------------------------------------- */
typedef struct {
    uint32_t late_cycles;   /* cycles that started after their own tick had passed */
    uint32_t max_due;       /* most cycles due at once (1 = always on time) */
    uint32_t worst_ticks;   /* longest travel_task_cycle() call, SysTick ticks */
    uint32_t outside;       /* cycles with a clamp status */
} run_stats_t;

static int run_cyclic(run_stats_t *st)
{
    uint32_t k = 0u;
    semihost_put_str("cycle,shaped_speed_ref,row,status\n");
    fw_ticks = 0u;
    SYST_CSR = 0u;
    SYST_RVR = FW_TICKS_PER_CYCLE - 1u;
    SYST_CVR = 0u;
    SYST_CSR = SYST_CSR_ENABLE | SYST_CSR_CLKSOURCE | SYST_CSR_TICKINT;
    while (k < recording_cycles) {
        uint32_t due;
        uint32_t t0;
        uint32_t t1;
        travel_result_t r;
        /* sleep until cycle k's tick; PRIMASK closes the race between the test and the WFI
         * (a pending interrupt still wakes WFI, and runs once interrupts are enabled again) */
        board_disable_interrupts();
        while (fw_ticks <= k) {
            board_wait_for_interrupt();
            board_enable_interrupts();
            board_disable_interrupts();
        }
        due = fw_ticks - k;
        board_enable_interrupts();
        if (due > st->max_due) {
            st->max_due = due;
        }
        if (due > 1u) {
            ++st->late_cycles;
        }
        if (due > FW_MAX_CYCLES_DUE) {
            SYST_CSR = 0u;
            semihost_put_str("# cortex-m3: OVERRUN FAULT: ");
            semihost_put_uint(due);
            semihost_put_str(" cycles due at once; stopping (controlled stop on a real drive)\n");
            return FW_EXIT_OVERRUN;
        }

        t0 = SYST_CVR;
        travel_task_cycle(&fw_task, recording_speed_ref[k], recording_rope_length[k], &r);
        t1 = SYST_CVR;
        {
            /* down-counter that reloads to FW_TICKS_PER_CYCLE - 1 */
            uint32_t ticks = (t0 >= t1) ? t0 - t1 : t0 + FW_TICKS_PER_CYCLE - t1;
            st->worst_ticks = ticks > st->worst_ticks ? ticks : st->worst_ticks;
        }
        if (r.status != SHK_OK) {
            ++st->outside; /* a drive would raise an "outside the sway envelope" warning here */
        }
        put_row(k, &r);
#ifdef FW_INJECT_OVERRUN_AT
        if (k == (uint32_t)(FW_INJECT_OVERRUN_AT)) {
            uint32_t until = fw_ticks + 2u;
            while (fw_ticks < until || SYST_CVR > FW_TICKS_PER_CYCLE / 2u) {
                /* stall until half-way through cycle k + 2 */
            }
        }
#endif
        ++k;
    }
    SYST_CSR = 0u;
    return 0;
}

/* ---- instruction counts ---------------------------------------------------------------- */
typedef travel_sample_t (*step_fn_t)(travel_shaper_t *s, travel_sample_t x);

__attribute__((noinline)) static travel_sample_t bench_empty_step(travel_shaper_t *s,
                                                                  travel_sample_t x)
{
    (void)s;
    return x;
}

/* Ticks for BENCH_STEPS calls of `fn` through a volatile pointer (so both loops are alike). */
static uint32_t bench_steps(step_fn_t fn)
{
    step_fn_t volatile call = fn;
    uint32_t i;
    uint32_t t0;
    uint32_t t1;
    meter_start();
    t0 = meter_now();
    for (i = 0u; i < BENCH_STEPS; ++i) {
        fw_sink = call(&fw_task.shaper, (travel_sample_t)recording_speed_ref[i]);
    }
    t1 = meter_now();
    return meter_ticks(t0, t1);
}

typedef void (*cycle_fn_t)(travel_task_t *t, int16_t v, uint32_t len, travel_result_t *r);

__attribute__((noinline)) static void bench_empty_cycle(travel_task_t *t, int16_t v, uint32_t len,
                                                        travel_result_t *r)
{
    (void)t;
    (void)len;
    r->speed_out = (travel_sample_t)v;
}

/* Ticks for the whole recording through travel_task_cycle-like `fn`. */
static uint32_t bench_cycles(cycle_fn_t fn)
{
    cycle_fn_t volatile call = fn;
    travel_result_t r;
    uint32_t k;
    uint32_t t0;
    uint32_t t1;
    meter_start();
    t0 = meter_now();
    for (k = 0u; k < recording_cycles; ++k) {
        call(&fw_task, recording_speed_ref[k], recording_rope_length[k], &r);
        fw_sink = r.speed_out;
    }
    t1 = meter_now();
    return meter_ticks(t0, t1);
}

#if defined(SWAY_FORMAT_Q15)
#define FW_SHAPER_STEP shk_shaper_q15_step
#define FW_SHAPER_SELECT shk_shaper_q15_select
#else
#define FW_SHAPER_STEP shk_shaper_q31_step
#define FW_SHAPER_SELECT shk_shaper_q31_select
#endif

static void report_instructions(void)
{
    uint32_t row;
    uint32_t empty = bench_steps(bench_empty_step);
    uint32_t cyc;
    uint32_t cyc_empty;
    for (row = 0u; row < SWAY_ROWS; ++row) {
        uint32_t t;
        (void)FW_SHAPER_SELECT(&fw_task.shaper, row);
        t = bench_steps(FW_SHAPER_STEP);
        semihost_put_str("# cortex-m3: shaper step, row ");
        semihost_put_uint(row);
        semihost_put_str(" (");
        semihost_put_uint(sway_shaper_n_taps[row]);
        semihost_put_str(" taps): ");
        put_hundredths(((uint64_t)(t - empty) * METER_INSTR_PER_TICK * 100u) / BENCH_STEPS);
        semihost_put_str(" instructions per step\n");
    }
    cyc = bench_cycles(travel_task_cycle);
    cyc_empty = bench_cycles(bench_empty_cycle);
    semihost_put_str("# cortex-m3: whole travel_task_cycle (lookup, creep limit, select, step), mean over the "
                     "recording: ");
    put_hundredths(((uint64_t)(cyc - cyc_empty) * METER_INSTR_PER_TICK * 100u) / recording_cycles);
    semihost_put_str(" instructions per cycle\n");
}

int main(void)
{
    run_stats_t st = {0u, 0u, 0u, 0u};
    uint32_t cal_instr;
    uint32_t cal_ticks;
    int icount_ok = meter_calibrate(&cal_instr, &cal_ticks);
    int rc;

    if (travel_task_init(&fw_task) != SHK_OK) {
        semihost_put_str("# cortex-m3: the emitted tables fail the runtime's checks\n");
        return FW_EXIT_INIT;
    }
    rc = run_cyclic(&st);

    put_report("# cortex-m3: drive cycle ns: ", SWAY_CYCLE_NS);
    put_report("# cortex-m3: SysTick ticks per cycle: ", FW_TICKS_PER_CYCLE);
    put_report("# cortex-m3: cycles run: ", recording_cycles);
    put_report("# cortex-m3: cycles outside the envelope (creep-limited): ", st.outside);
    put_report("# cortex-m3: late cycles (overrun catch-up): ", st.late_cycles);
    put_report("# cortex-m3: most cycles due at once: ", st.max_due);
    put_report("# cortex-m3: stack used bytes: ", fw_stack_used_bytes());
    put_report("# cortex-m3: RAM of the task instance bytes: ", sizeof(fw_task));
    if (!icount_ok) {
        semihost_put_str("# cortex-m3: SysTick is not counting instructions (run qemu with -icount shift=0); "
                         "no instruction figures\n");
        return rc;
    }
    put_report("# cortex-m3: calibration instructions: ", cal_instr);
    put_report("# cortex-m3: calibration SysTick ticks: ", cal_ticks);
    semihost_put_str("# cortex-m3: worst travel_task_cycle in the paced run: ");
    semihost_put_uint(st.worst_ticks * METER_INSTR_PER_TICK);
    semihost_put_str(" instructions (to the nearest 40) of a ");
    semihost_put_uint((uint64_t)FW_TICKS_PER_CYCLE * METER_INSTR_PER_TICK);
    semihost_put_str(" instruction budget\n");
    report_instructions();
    return rc;
}
