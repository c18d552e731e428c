/* synthetic: a simulated grip-intent study, for demos and tests.
 *
 * EEG (signal: eeg) comes from a small forward model: a few cortical sources -- a sensorimotor
 * mu rhythm (10-12 Hz) whose amplitude drops during "grip" trials (event-related
 * desynchronisation), an unmodulated occipital alpha, a beta rhythm with a weaker drop, and
 * broadband background activity -- mixed into the channels through a fixed random matrix,
 * plus white sensor noise and line interference. Forearm EMG (signal: emg) is band-limited
 * noise whose amplitude follows the grip. Cue markers "rest" and "grip" open each trial.
 * Every value is invented for the demo; no recorded data is used. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <weft/stage.h>

#include "rng.h"
#include "trial_schedule.h"

#define MAX_SOURCES 16
#define LABEL_LEN 16

static const weft_param_spec params[] = {
    { "signal", WEFT_PARAM_CHOICE, 0, "eeg", WEFT_NO_RANGE, "", "eeg|emg",
      "what to simulate: scalp EEG from the forward model, or forearm EMG" },
    { "channels", WEFT_PARAM_INTEGER, 0, "8", 1, 256, "", NULL, "number of channels" },
    { "rate", WEFT_PARAM_NUMBER, 0, "250", 10, 100000, "Hz", NULL, "sample rate" },
    { "seed", WEFT_PARAM_INTEGER, 0, "1", 0, 2147483647, "", NULL,
      "session seed: trial order, cue jitter and noise; sources with one seed share cues" },
    { "subject", WEFT_PARAM_INTEGER, 0, "1", 0, 2147483647, "", NULL,
      "subject seed: mixing matrix and rhythm frequencies, fixed across sessions" },
    { "trials", WEFT_PARAM_INTEGER, 0, "0", 0, 1000000, "", NULL,
      "trials before the stream ends (a calibration run); 0 runs without end" },
    { "trial", WEFT_PARAM_NUMBER, 0, "4", 0.5, 60, "s", NULL, "length of a trial after its cue" },
    { "gap", WEFT_PARAM_NUMBER, 0, "2", 0.1, 60, "s", NULL, "pause between trials" },
    { "jitter", WEFT_PARAM_NUMBER, 0, "1", 0, 10, "s", NULL,
      "random extra pause, uniform from 0 to this" },
    { "lead", WEFT_PARAM_NUMBER, 0, "2", 0, 600, "s", NULL, "time before the first cue" },
    { "sources", WEFT_PARAM_INTEGER, 0, "4", 3, MAX_SOURCES, "", NULL,
      "cortical sources in the forward model (eeg)" },
    { "mu_amplitude", WEFT_PARAM_NUMBER, 0, "8", 0, 1000, "uV", NULL,
      "RMS of the modulated mu source at rest (eeg)" },
    { "erd", WEFT_PARAM_NUMBER, 0, "0.35", 0, 1, "", NULL,
      "mu amplitude during grip as a fraction of rest (eeg); 1 = no modulation" },
    { "emg_amplitude", WEFT_PARAM_NUMBER, 0, "40", 0, 10000, "uV", NULL,
      "RMS of a full contraction (emg)" },
    { "noise", WEFT_PARAM_NUMBER, 0, "2", 0, 1000, "uV", NULL, "white sensor noise RMS" },
    { "line", WEFT_PARAM_NUMBER, 0, "5", 0, 10000, "uV", NULL, "line interference amplitude" },
    { "line_freq", WEFT_PARAM_NUMBER, 0, "50", 1, 1000, "Hz", NULL, "line frequency" },
    { "markers", WEFT_PARAM_BOOLEAN, 0, "true", WEFT_NO_RANGE, "", NULL,
      "emit the cue markers (give one source of a session the markers, not both)" },
    { "mixing", WEFT_PARAM_MATRIX, 0, "[]", -1e6, 1e6, "", NULL,
      "channels x sources mixing matrix (eeg); empty: drawn from the subject seed" },
    WEFT_PARAMS_END,
};

/* Scalp positions of the 10-10 system around the sensorimotor cortex first (common practice
 * for motor studies), so small montages cover C3/C4. */
static const char *const eeg_names[] = {
    "C3",  "C4",  "Cz",  "FC3", "FC4", "CP3", "CP4", "Pz",  "FCz", "CPz", "C1",
    "C2",  "C5",  "C6",  "FC1", "FC2", "CP1", "CP2", "Fz",  "Oz",  "O1",  "O2",
    "P3",  "P4",  "F3",  "F4",  "T7",  "T8",  "FC5", "FC6", "CP5", "CP6",
};
static const char *const emg_names[] = { "flexor", "extensor" };

typedef struct resonator {  /* AR(2) driven by white noise: a narrow-band rhythm */
    double a1, a2, scale, x1, x2;
} resonator;

typedef struct synth {
    int emg;
    uint32_t channels, n_sources;
    double rate, noise, line, line_freq, erd, emg_amplitude;
    int markers;
    trial_schedule schedule;
    uint64_t marked;            /* trials whose cue marker was emitted */
    uint64_t n;                 /* next sample index */
    rng r;
    double *mixing;             /* channels x sources */
    resonator rhythm[MAX_SOURCES];
    double background[MAX_SOURCES];
    double gain[MAX_SOURCES];   /* smoothed modulation of each source */
    double *line_amp, *line_phase, *hp_state, *lp_state, *hp_prev;
    double activation, trial_level;
    uint64_t level_trial;       /* trial whose level was drawn */
    char (*labels)[LABEL_LEN];
    const char **label_ptrs;
} synth;

static void resonator_init(resonator *o, double freq, double bandwidth, double rate,
                           double rms)
{
    double r = exp(-WEFT_PI * bandwidth / rate), w = 2 * WEFT_PI * freq / rate;
    o->a1 = 2 * r * cos(w);
    o->a2 = -r * r;
    /* Stationary variance of x[n] = a1 x[n-1] + a2 x[n-2] + e[n] with unit-variance e
     * (Box and Jenkins, Time Series Analysis, AR(2) variance). */
    double var = (1 - o->a2) / ((1 + o->a2) * ((1 - o->a2) * (1 - o->a2) - o->a1 * o->a1));
    o->scale = rms / sqrt(var);
    o->x1 = o->x2 = 0;
}

static double resonator_step(resonator *o, double e)
{
    double x = o->a1 * o->x1 + o->a2 * o->x2 + e;
    o->x2 = o->x1;
    o->x1 = x;
    return x * o->scale;
}

static void destroy(void *self)
{
    synth *s = self;
    if (!s)
        return;
    free(s->mixing);
    free(s->line_amp);
    free(s->line_phase);
    free(s->hp_state);
    free(s->lp_state);
    free(s->hp_prev);
    free(s->labels);
    free(s->label_ptrs);
    free(s);
}

static int setup_mixing(synth *s, const weft_host *host, const weft_params *p, rng *subject)
{
    const weft_param *m = weft_param_get(p, "mixing");
    s->mixing = calloc((size_t)s->channels * s->n_sources, sizeof *s->mixing);
    if (!s->mixing)
        return WEFT_ENOMEM;
    if (m->rows) {
        if (m->rows != s->channels || m->cols != s->n_sources) {
            host->param_error(host, "mixing",
                              "mixing is %u x %u; it must be channels x sources = %u x %u",
                              m->rows, m->cols, s->channels, s->n_sources);
            return WEFT_EINVAL;
        }
        memcpy(s->mixing, m->values, (size_t)s->channels * s->n_sources * sizeof(double));
        return WEFT_OK;
    }
    for (size_t i = 0; i < (size_t)s->channels * s->n_sources; i++)
        s->mixing[i] = rng_gauss(subject);
    return WEFT_OK;
}

static int setup_eeg(synth *s, const weft_host *host, const weft_params *p, rng *subject)
{
    if (s->rate < 60) {
        host->param_error(host, "rate", "rate %g Hz is too low for EEG rhythms up to 30 Hz; "
                          "use 60 Hz or more", s->rate);
        return WEFT_EINVAL;
    }
    int rc = setup_mixing(s, host, p, subject);
    if (rc)
        return rc;
    double mu = weft_param_number(p, "mu_amplitude");
    /* Rhythm frequencies vary between people; draw them per subject. */
    resonator_init(&s->rhythm[0], 10.0 + 2.0 * rng_uniform(subject), 1.5, s->rate, mu);
    resonator_init(&s->rhythm[1], 9.0 + 1.5 * rng_uniform(subject), 1.5, s->rate, mu * 0.8);
    resonator_init(&s->rhythm[2], 18.0 + 6.0 * rng_uniform(subject), 3.0, s->rate, mu * 0.4);
    for (uint32_t k = 0; k < s->n_sources; k++)
        s->gain[k] = 1;
    return WEFT_OK;
}

static int make_labels(synth *s)
{
    s->labels = calloc(s->channels, sizeof *s->labels);
    s->label_ptrs = calloc(s->channels, sizeof *s->label_ptrs);
    if (!s->labels || !s->label_ptrs)
        return WEFT_ENOMEM;
    for (uint32_t c = 0; c < s->channels; c++) {
        const char *name = NULL;
        if (s->emg && c < 2)
            name = emg_names[c];
        else if (!s->emg && c < sizeof eeg_names / sizeof eeg_names[0])
            name = eeg_names[c];
        if (name)
            strncpy(s->labels[c], name, LABEL_LEN - 1);
        else
            snprintf(s->labels[c], LABEL_LEN, "%s%u", s->emg ? "emg" : "E", (unsigned)(c + 1));
        s->label_ptrs[c] = s->labels[c];
    }
    return WEFT_OK;
}

static int init(const weft_host *host, const weft_params *p, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self)
{
    (void)in;
    (void)n_in;
    synth *s = calloc(1, sizeof *s);
    if (!s)
        return WEFT_ENOMEM;
    s->emg = strcmp(weft_param_text(p, "signal"), "emg") == 0;
    s->channels = (uint32_t)weft_param_number(p, "channels");
    s->n_sources = (uint32_t)weft_param_number(p, "sources");
    s->rate = weft_param_number(p, "rate");
    s->noise = weft_param_number(p, "noise");
    s->line = weft_param_number(p, "line");
    s->line_freq = weft_param_number(p, "line_freq");
    s->erd = weft_param_number(p, "erd");
    s->emg_amplitude = weft_param_number(p, "emg_amplitude");
    s->markers = weft_param_number(p, "markers") != 0;
    uint64_t seed = (uint64_t)weft_param_number(p, "seed");
    uint64_t subject_seed = (uint64_t)weft_param_number(p, "subject");
    double trial = weft_param_number(p, "trial"), gap = weft_param_number(p, "gap");
    trial_schedule_init(&s->schedule, seed, weft_param_number(p, "lead"), trial, gap,
                        weft_param_number(p, "jitter"),
                        (uint64_t)weft_param_number(p, "trials"));
    rng_seed(&s->r, seed * 2 + (uint64_t)s->emg);
    rng subject;
    rng_seed(&subject, subject_seed * 7919 + 17);

    int rc = WEFT_OK;
    if (s->line_freq >= s->rate / 2 && s->line > 0) {
        host->param_error(host, "line_freq", "line_freq %g Hz must be below half the rate "
                          "(%g Hz), or set line: 0", s->line_freq, s->rate / 2);
        rc = WEFT_EINVAL;
    }
    s->line_amp = calloc(s->channels, sizeof *s->line_amp);
    s->line_phase = calloc(s->channels, sizeof *s->line_phase);
    s->hp_state = calloc(s->channels, sizeof *s->hp_state);
    s->lp_state = calloc(s->channels, sizeof *s->lp_state);
    s->hp_prev = calloc(s->channels, sizeof *s->hp_prev);
    if (!s->line_amp || !s->line_phase || !s->hp_state || !s->lp_state || !s->hp_prev)
        rc = WEFT_ENOMEM;
    for (uint32_t c = 0; rc == WEFT_OK && c < s->channels; c++) {
        s->line_amp[c] = s->line * (0.5 + rng_uniform(&subject));
        s->line_phase[c] = 2 * WEFT_PI * rng_uniform(&subject);
    }
    if (rc == WEFT_OK && !s->emg)
        rc = setup_eeg(s, host, p, &subject);
    if (rc == WEFT_OK && s->emg && s->rate < 200) {
        host->param_error(host, "rate", "rate %g Hz is too low for surface EMG; use 500 Hz or "
                          "more (1000-2000 Hz is common practice)", s->rate);
        rc = WEFT_EINVAL;
    }
    if (rc == WEFT_OK)
        rc = make_labels(s);
    if (rc != WEFT_OK) {
        if (rc == WEFT_ENOMEM)
            host->error(host, "out of memory for %u channels", s->channels);
        destroy(s);
        return rc;
    }
    out->kind = WEFT_STREAM_SAMPLES;
    out->channels = s->channels;
    out->rate = s->rate;
    out->labels = s->label_ptrs;
    out->bounded = weft_param_number(p, "trials") > 0;
    *self = s;
    return WEFT_OK;
}

/* The modulation target of source k at time t: the mu rhythm (k = 0) drops to `erd` from
 * 0.3 s after a grip cue, beta (k = 2) halfway to it; a plausible latency, from memory. */
static double eeg_target(const synth *s, unsigned k, double t)
{
    const trial_schedule *ts = &s->schedule;
    if (!ts->grip || !trial_schedule_active(ts, t) || t < ts->cue + 0.3)
        return 1.0;
    if (k == 0)
        return s->erd;
    if (k == 2)
        return 0.5 * (1.0 + s->erd);
    return 1.0;
}

static void eeg_frame(synth *s, double t, float *frame)
{
    double src[MAX_SOURCES];
    /* Modulation follows its target with a 0.2 s time constant: rhythms fade, not switch. */
    double alpha = 1.0 - exp(-1.0 / (0.2 * s->rate));
    for (unsigned k = 0; k < s->n_sources; k++) {
        double e = rng_gauss(&s->r);
        if (k < 3) {
            s->gain[k] += (eeg_target(s, k, t) - s->gain[k]) * alpha;
            src[k] = s->gain[k] * resonator_step(&s->rhythm[k], e);
        } else {
            /* Leaky integration of white noise: a low-frequency-heavy background. */
            s->background[k] = 0.98 * s->background[k] + e;
            src[k] = 0.5 * s->background[k];
        }
    }
    for (uint32_t c = 0; c < s->channels; c++) {
        double v = 0;
        const double *row = s->mixing + (size_t)c * s->n_sources;
        for (unsigned k = 0; k < s->n_sources; k++)
            v += row[k] * src[k];
        frame[c] = (float)v;
    }
}

static void emg_frame(synth *s, double t, float *frame)
{
    const trial_schedule *ts = &s->schedule;
    if (s->level_trial != ts->count) { /* each grip has its own strength */
        s->level_trial = ts->count;
        s->trial_level = 0.6 + 0.4 * rng_uniform(&s->r);
    }
    double target = 0.05;
    if (ts->grip && trial_schedule_active(ts, t) && t >= ts->cue + 0.25)
        target = s->trial_level;
    s->activation += (target - s->activation) * (1.0 - exp(-1.0 / (0.05 * s->rate)));
    /* One-pole high-pass at 20 Hz and low-pass at 450 Hz (if the rate allows): the surface
     * EMG band, common practice. */
    double hp = exp(-2 * WEFT_PI * 20.0 / s->rate);
    double lp = s->rate > 900 ? exp(-2 * WEFT_PI * 450.0 / s->rate) : 0.0;
    for (uint32_t c = 0; c < s->channels; c++) {
        double w = rng_gauss(&s->r);
        double h = hp * (s->hp_state[c] + w - s->hp_prev[c]);
        s->hp_prev[c] = w;
        s->hp_state[c] = h;
        s->lp_state[c] = lp * s->lp_state[c] + (1 - lp) * h;
        double gain = c % 2 ? 0.6 : 1.0; /* antagonist co-contracts more weakly */
        frame[c] = (float)(s->emg_amplitude * 1.6 * gain * s->activation * s->lp_state[c]);
    }
}

static int process(void *self, const weft_block *in, uint32_t n_in, weft_block *out)
{
    (void)in;
    (void)n_in;
    synth *s = self;
    uint32_t frames = 0;
    out->n_markers = 0;
    while (frames < out->capacity) {
        double t = (double)s->n / s->rate;
        if (!trial_schedule_advance(&s->schedule, t))
            break;
        const trial_schedule *ts = &s->schedule;
        if (s->markers && s->marked < ts->count && t >= ts->cue &&
            out->n_markers < out->marker_capacity) {
            out->markers[out->n_markers++] = (weft_marker){ ts->grip ? "grip" : "rest", s->n,
                                                            ts->trial };
            s->marked = ts->count;
        }
        float *frame = out->data + (size_t)frames * s->channels;
        if (s->emg)
            emg_frame(s, t, frame);
        else
            eeg_frame(s, t, frame);
        double cycles = s->line_freq * (double)s->n / s->rate;
        double phase = 2 * WEFT_PI * (cycles - floor(cycles)); /* keeps sin() precise */
        for (uint32_t c = 0; c < s->channels; c++)
            frame[c] += (float)(s->noise * rng_gauss(&s->r) +
                                s->line_amp[c] * sin(phase + s->line_phase[c]));
        s->n++;
        frames++;
    }
    out->frames = frames;
    return frames == 0 && out->capacity > 0 ? WEFT_END : WEFT_OK;
}

static const weft_stage_api api = {
    WEFT_API_HEADER,
    .roles = WEFT_ROLE_SOURCE,
    .name = "synthetic",
    .version = "0.1.0",
    .summary = "simulated grip-intent study: EEG forward model or forearm EMG, with cues",
    .params = params,
    .init = init,
    .process = process,
    .destroy = destroy,
};

WEFT_STAGE(api)
