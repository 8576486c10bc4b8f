/*
 * host/main.c - the travel-shaping cyclic task on a PC, driven by a recorded log.
 *
 *   shaper_host RECORDING.csv EXPECTED.csv OUTPUT.csv
 *
 * Reads the recorded speed reference and rope length (one row per drive cycle), runs
 * travel_task_cycle once per row exactly as a drive's cyclic task would, writes the shaped
 * speed reference with the schedule row and lookup status to OUTPUT.csv, and compares every
 * value with EXPECTED.csv (from the Python integer reference, scripts/expected_output.py).
 * Exit status: 0 bit-exact, 1 mismatch, 2 bad input or files.
 *
 * Only the loop is "host": on a drive the rows come from the fieldbus each cycle and the
 * result goes to the speed controller (see ../cortex-m/main.c for a timer-paced version).
 */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "travel_task.h"

#define LINE_MAX_CHARS 256
#define OUTPUT_HEADER "cycle,shaped_speed_ref,row,status"
#define RECORDING_HEADER "speed_ref,rope_length"

/* Parse exactly `n` comma-separated decimal integers in [lo, hi]; 0 on success. */
static int parse_ints(const char *line, long long *out, int n, long long lo, long long hi)
{
    const char *p = line;
    int i;
    for (i = 0; i < n; ++i) {
        char *end = NULL;
        long long v;
        errno = 0;
        v = strtoll(p, &end, 10);
        if (end == p || errno != 0 || v < lo || v > hi) {
            return -1;
        }
        out[i] = v;
        p = end;
        if (i + 1 < n) {
            if (*p != ',') {
                return -1;
            }
            ++p;
        }
    }
    return (*p == '\n' || *p == '\r' || *p == '\0') ? 0 : -1;
}

/* Next line that is not empty and not a '#' comment; 0 at end of file. */
static int next_line(FILE *f, char *buf)
{
    while (fgets(buf, LINE_MAX_CHARS, f) != NULL) {
        if (buf[0] != '#' && buf[0] != '\n' && buf[0] != '\r') {
            return 1;
        }
    }
    return 0;
}

static int header_is(const char *line, const char *header)
{
    size_t n = strlen(header);
    return strncmp(line, header, n) == 0 && (line[n] == '\n' || line[n] == '\r' || line[n] == '\0');
}

/* The replay: init once, then one travel_task_cycle per recorded row. Returns the exit status. */
static int replay(FILE *rec, FILE *exp, FILE *out, char **names)
{
    static travel_task_t task; /* static: the accumulator ring is SWAY_RING_BYTES */
    char in_line[LINE_MAX_CHARS];
    char exp_line[LINE_MAX_CHARS];
    unsigned long cycle = 0u;
    unsigned long mismatches = 0u;
    unsigned long outside = 0u;
    unsigned long row_min = SWAY_ROWS;
    unsigned long row_max = 0u;

    if (!next_line(rec, in_line) || !header_is(in_line, RECORDING_HEADER)) {
        fprintf(stderr, "shaper_host: %s: first row must be '%s'\n", names[1], RECORDING_HEADER);
        return 2;
    }
    if (!next_line(exp, exp_line) || !header_is(exp_line, OUTPUT_HEADER)) {
        fprintf(stderr, "shaper_host: %s: first row must be '%s'\n", names[2], OUTPUT_HEADER);
        return 2;
    }

    /* start-up: init once, before the first cycle */
    if (travel_task_init(&task) != SHK_OK) {
        fprintf(stderr, "shaper_host: the emitted tables fail the runtime's checks\n");
        return 2;
    }
    fprintf(out, "%s\n", OUTPUT_HEADER);

    /* the cyclic task: one call per drive cycle */
    while (next_line(rec, in_line)) {
        long long in[2];
        long long want[4];
        travel_result_t r;
        if (parse_ints(in_line, in, 2, INT32_MIN, (long long)UINT32_MAX) != 0 || in[0] < INT16_MIN ||
            in[0] > INT16_MAX || in[1] < 0) {
            fprintf(stderr, "shaper_host: %s: data row %lu is not 'int16,uint32': %s", names[1],
                    cycle + 1u, in_line);
            return 2;
        }
        travel_task_cycle(&task, (int16_t)in[0], (uint32_t)in[1], &r);
        fprintf(out, "%lu,%ld,%lu,%lu\n", cycle, (long)r.speed_out, (unsigned long)r.row,
                (unsigned long)r.status);

        if (r.status != SHK_OK) {
            ++outside; /* a drive would raise an "outside the sway envelope" warning here */
        }
        row_min = r.row < row_min ? r.row : row_min;
        row_max = r.row > row_max ? r.row : row_max;

        if (!next_line(exp, exp_line) ||
            parse_ints(exp_line, want, 4, (long long)INT32_MIN, (long long)UINT32_MAX) != 0) {
            fprintf(stderr, "shaper_host: %s has no valid row for cycle %lu\n", names[2], cycle);
            return 1;
        }
        if (want[0] != (long long)cycle || want[1] != (long long)r.speed_out ||
            want[2] != (long long)r.row || want[3] != (long long)r.status) {
            if (mismatches < 10u) {
                fprintf(stderr, "shaper_host: cycle %lu: got %ld row %lu status %lu, expected %s",
                        cycle, (long)r.speed_out, (unsigned long)r.row, (unsigned long)r.status,
                        exp_line);
            }
            ++mismatches;
        }
        ++cycle;
    }
    if (next_line(exp, exp_line)) {
        fprintf(stderr, "shaper_host: %s has more rows than the %lu recorded cycles\n", names[2], cycle);
        return 1;
    }
    printf("shaper_host: %lu cycles of %lu ns, rows %lu..%lu of %lu, %lu cycles outside the envelope "
           "(creep-limited)\n", cycle, (unsigned long)SWAY_CYCLE_NS, row_min, row_max,
           (unsigned long)SWAY_ROWS, outside);
    if (mismatches != 0u || cycle == 0u) {
        printf("shaper_host: FAILED: %lu cycles differ from the Python reference\n", mismatches);
        return 1;
    }
    printf("shaper_host: every shaped value, row and status is bit-exact with the Python reference\n");
    return 0;
}

int main(int argc, char **argv)
{
    FILE *rec;
    FILE *exp;
    FILE *out;
    int status;

    if (argc != 4) {
        fprintf(stderr, "usage: %s RECORDING.csv EXPECTED.csv OUTPUT.csv\n", argv[0]);
        return 2;
    }
    rec = fopen(argv[1], "r");
    exp = fopen(argv[2], "r");
    out = fopen(argv[3], "w");
    if (rec == NULL || exp == NULL || out == NULL) {
        fprintf(stderr, "shaper_host: cannot open %s\n",
                rec == NULL ? argv[1] : (exp == NULL ? argv[2] : argv[3]));
        status = 2;
    } else {
        status = replay(rec, exp, out, argv);
    }
    if (out != NULL && fclose(out) != 0 && status == 0) {
        fprintf(stderr, "shaper_host: cannot write %s\n", argv[3]);
        status = 2;
    }
    if (rec != NULL) {
        (void)fclose(rec);
    }
    if (exp != NULL) {
        (void)fclose(exp);
    }
    return status;
}
