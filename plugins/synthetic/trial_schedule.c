/* trial_schedule: cue times and classes of the synthetic session. */
#include "trial_schedule.h"

#include <math.h>

static void draw_pair(trial_schedule *ts)
{
    int first_grip = rng_uniform(&ts->r) < 0.5;
    ts->order[0] = first_grip;
    ts->order[1] = !first_grip;
}

void trial_schedule_init(trial_schedule *ts, uint64_t seed, double lead, double trial,
                         double gap, double jitter, uint64_t max_trials)
{
    /* A stream of its own, so the schedule does not depend on how many noise samples the
     * signal generator drew. */
    rng_seed(&ts->r, seed * 0x9e37u + 0x5eed);
    ts->lead = lead;
    ts->trial = trial;
    ts->gap = gap;
    ts->jitter = jitter;
    ts->max_trials = max_trials;
    ts->count = 1;
    ts->cue = lead;
    draw_pair(ts);
    ts->grip = ts->order[0];
    ts->end_of_session = INFINITY;
}

int trial_schedule_advance(trial_schedule *ts, double t)
{
    while (t >= ts->cue + ts->trial + ts->gap * 0.5) {
        if (ts->max_trials && ts->count >= ts->max_trials) {
            ts->end_of_session = ts->cue + ts->trial + ts->gap;
            return t < ts->end_of_session;
        }
        double next = ts->cue + ts->trial + ts->gap + ts->jitter * rng_uniform(&ts->r);
        /* Cues fall on whole milliseconds, so every stream rate places them identically. */
        ts->cue = round(next * 1000.0) / 1000.0;
        if (ts->count % 2 == 0)
            draw_pair(ts);
        ts->grip = ts->order[ts->count % 2];
        ts->count++;
    }
    return 1;
}

int trial_schedule_active(const trial_schedule *ts, double t)
{
    return t >= ts->cue && t < ts->cue + ts->trial;
}
