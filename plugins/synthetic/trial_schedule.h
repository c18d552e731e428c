/* trial_schedule: the cue timeline of the synthetic grip study -- which trial is "rest" or
 * "grip" and when each cue comes. It depends only on the seed and the timing parameters, so
 * an EEG and an EMG source with the same seed describe the same session. */
#ifndef SYNTH_TRIAL_SCHEDULE_H
#define SYNTH_TRIAL_SCHEDULE_H

#include <stdint.h>

#include "rng.h"

typedef struct trial_schedule {
    rng r;
    double lead, trial, gap, jitter;
    uint64_t max_trials;        /* 0: unbounded */
    uint64_t count;             /* trials generated so far */
    double cue;                 /* start of the current trial, seconds */
    int grip;                   /* class of the current trial */
    int order[2];               /* balanced pairs: each pair holds one rest and one grip */
    double end_of_session;      /* seconds; +inf if unbounded */
} trial_schedule;

void trial_schedule_init(trial_schedule *ts, uint64_t seed, double lead, double trial,
                         double gap, double jitter, uint64_t max_trials);

/* Move to the trial that contains (or follows) time t; returns 0 when past the last trial. */
int trial_schedule_advance(trial_schedule *ts, double t);

/* Is time t inside the current trial (cue <= t < cue + trial)? */
int trial_schedule_active(const trial_schedule *ts, double t);

#endif
