/* Host simulation of the exported counters, cycle by cycle, from the header's constants only.
 *
 * Usage: timers_sim FRAMES
 * Prints one line per event of the first FRAMES frames:
 *   trigger FRAME TICK     the frame counter reached the trigger compare
 *   edge FRAME TICK        the flash counter reached the flash compare with a flash enabled
 *   gate_end FRAME TICK    the flash counter reached the gate end compare (edge + width)
 * and at the end "drive CYCLES LAST_START": drive cycles begun and the tick of the last.
 * TICK counts controller clock ticks from the start (64-bit).
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

#include "strobeplan_timers.h"

typedef struct {
    uint64_t prescaler, period, pre, low, high, value;
    int chained;
} counter;

/* One clock tick; returns 1 when the counter takes a new value. */
static int step(counter *c)
{
    if (++c->pre < c->prescaler)
        return 0;
    c->pre = 0;
    if (c->chained) {
        c->low++;
        if (c->low == ((uint64_t)1 << SP_COUNTER_BITS)) {
            c->low = 0;
            c->high++;
        }
        if (((c->high << SP_COUNTER_BITS) | c->low) == c->period) {
            c->low = 0;
            c->high = 0;
        }
        c->value = (c->high << SP_COUNTER_BITS) | c->low;
    } else {
        c->value++;
        if (c->value == c->period)
            c->value = 0;
    }
    return 1;
}

static counter make(uint64_t prescaler, uint64_t period, int chained)
{
    counter c = {prescaler, period, 0, 0, 0, 0, chained};
    return c;
}

int main(int argc, char **argv)
{
    long frames = argc > 1 ? atol(argv[1]) : 2;
    counter drive = make(SP_DRIVE_PRESCALER, SP_DRIVE_PERIOD, SP_DRIVE_CHAINED);
    counter flash = make(SP_FLASH_PRESCALER, SP_FLASH_PERIOD, SP_FLASH_CHAINED);
    counter frame = make(SP_FRAME_PRESCALER, SP_FRAME_PERIOD, SP_FRAME_CHAINED);
    uint64_t t, end, drive_periods = 0, drive_cycles = 0, drive_last = 0;
    uint64_t edge_cmp = 0, gate_cmp = 0, trig_cmp = 0, enable_cmp = 0, rep = 0, armed = 0;
    long row_frame = -1, gate_frame = -1, armed_frame = -1;
    int gate = 0, moved_drive, moved_flash, moved_frame;

    end = (uint64_t)(frames + 1) * SP_FRAME_PERIOD * SP_FRAME_PRESCALER;
    for (t = 0; t < end; t++) {
        if (t == 0) {
            moved_drive = moved_flash = moved_frame = 1;
        } else {
            moved_drive = step(&drive);
            moved_flash = step(&flash);
            moved_frame = step(&frame);
        }
        if (moved_drive && drive.value == 0) {
            if (drive_periods % SP_DRIVE_REPETITION == 0) {
                drive_cycles++;
                drive_last = t;
            }
            drive_periods++;
        }
        if (moved_frame && frame.value == 0) {
            long row;
            row_frame++;
            row = row_frame % (long)SP_FRAMES;
            edge_cmp = SP_FLASH_COMPARE[row];
            trig_cmp = SP_TRIGGER_COMPARE[row];
            enable_cmp = SP_ENABLE_COMPARE[row];
            rep = SP_REPETITION[row];
        }
        if (row_frame >= frames && !gate && armed == 0)
            break;
        if (moved_frame && SP_FRAME_TRIGGER && frame.value == trig_cmp && row_frame < frames)
            printf("trigger %ld %llu\n", row_frame, (unsigned long long)t);
        if (moved_frame && frame.value == enable_cmp) {
            armed = rep;
            armed_frame = row_frame;
        }
        if (moved_flash && gate && flash.value == gate_cmp) {
            printf("gate_end %ld %llu\n", gate_frame, (unsigned long long)t);
            gate = 0;
        }
        if (moved_flash && flash.value == edge_cmp && (SP_FLASH_CONTINUOUS || armed > 0)) {
            /* a flash belongs to the frame that enabled it (its exposure may run past
               the frame's end) */
            long owner = SP_FLASH_CONTINUOUS ? row_frame : armed_frame;
            if (armed > 0)
                armed--;
            if (owner >= frames)
                continue;
            printf("edge %ld %llu\n", owner, (unsigned long long)t);
            gate = 1;
            gate_frame = owner;
            gate_cmp = (edge_cmp + SP_FLASH_GATE_WIDTH) % SP_FLASH_PERIOD;
        }
    }
    (void)SP_DRIVE_COMPARE;
    (void)SP_CLOCK_HZ;
    printf("drive %llu %llu\n", (unsigned long long)drive_cycles,
           (unsigned long long)drive_last);
    return 0;
}
