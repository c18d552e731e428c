/* weft/stage.h -- the one header a weft stage plugin includes.
 *
 * A *stage* is one step of a processing graph, built as a shared object that exports a single
 * function, weft_stage_entry(), returning a constant descriptor (weft_stage_api). The host reads
 * the descriptor, checks the ABI version, validates the graph's parameters against the declared
 * ones, and then drives the stage through its callbacks.
 *
 * Roles
 *   source    produces blocks of frames (an amplifier, a recording, a simulator).
 *   filter    turns the blocks of its input into blocks of its output, causally.
 *   readout   is asked, at chosen moments, for a result (e.g. class probabilities) computed
 *             from one window per input; every window ends at the query time.
 *   sink      receives blocks and/or results and takes them out of the process.
 *   fittable  (with filter or readout) learns parameters from labelled epochs.
 *
 * Lifecycle
 *   init -> { process | query | deliver }* -> destroy        (fit: see below)
 *   All callbacks of one stage instance are called on one thread, never concurrently.
 *   Different instances may be called from different threads; keep no mutable globals.
 *
 * Data
 *   Samples are float32 and interleaved (frame-major): sample n of channel c is
 *   data[n * channels + c]. Sample indices count from the start of the stream (uint64) and are
 *   the truth for alignment; times only map indices to the host clock.
 *
 * Return codes
 *   Callbacks return WEFT_OK (0), or a negative WEFT_E* code after describing the problem once
 *   with host->error(). Sources may also return WEFT_END. Only fixed-size integers, float and
 *   double cross the ABI in structs.
 *
 * Compatibility
 *   The host refuses a plugin whose abi_major differs from its own and says both numbers.
 *   Within a major version, new optional callbacks are only appended to weft_stage_api; the
 *   host reads api->struct_size to know which of them a plugin has.
 */
#ifndef WEFT_STAGE_H
#define WEFT_STAGE_H

#include <stddef.h>
#include <stdint.h>
#include <string.h>

#ifdef __cplusplus
extern "C" {
#endif

#define WEFT_ABI_MAJOR 1
#define WEFT_ABI_MINOR 0

/* ---- return codes ------------------------------------------------------------------------ */

enum {
    WEFT_OK = 0,
    WEFT_END = 1,          /* source: the stream has ended (after this block's frames) */
    WEFT_EINVAL = -1,      /* bad parameter, layout or input data */
    WEFT_ENOMEM = -2,      /* allocation failed (init and fit only) */
    WEFT_EIO = -3,         /* a file, device or socket failed */
    WEFT_ESTATE = -4,      /* called in a state that does not allow it (e.g. not fitted) */
    WEFT_EFIT = -5         /* fitting failed: too few trials, singular covariance ... */
};

/* ---- roles ------------------------------------------------------------------------------- */

enum {
    WEFT_ROLE_SOURCE = 1u << 0,
    WEFT_ROLE_FILTER = 1u << 1,
    WEFT_ROLE_READOUT = 1u << 2,
    WEFT_ROLE_SINK = 1u << 3,
    WEFT_ROLE_FITTABLE = 1u << 4
};

/* ---- declared parameters ----------------------------------------------------------------- */

typedef enum weft_param_type {
    WEFT_PARAM_NUMBER = 1,  /* double */
    WEFT_PARAM_INTEGER,     /* whole number, delivered in .number */
    WEFT_PARAM_BOOLEAN,     /* true/false, delivered in .number as 1 or 0 */
    WEFT_PARAM_STRING,      /* free text, delivered in .text */
    WEFT_PARAM_CHOICE,      /* one of spec.choices ("a|b|c"), delivered in .text */
    WEFT_PARAM_NUMBERS,     /* list of numbers: .values, .cols entries, .rows == 1 */
    WEFT_PARAM_MATRIX,      /* list of equal-length rows: .values row-major, .rows x .cols */
    WEFT_PARAM_STRINGS      /* list of strings: .strings, .n_strings entries */
} weft_param_type;

enum {
    WEFT_PARAM_LEARNED = 1u << 0   /* written by fit; a fittable stage without it is unfitted */
};

/* One declared parameter. A stage lists them in a static array ending with { .name = NULL }.
 * default_text is written as in a graph file ("4", "true", "[8, 30]", "hann"); NULL means the
 * parameter is required unless it is WEFT_PARAM_LEARNED. For NUMBER and INTEGER (and every
 * entry of NUMBERS / MATRIX) the host enforces min <= value <= max when min <= max; set
 * min > max (e.g. WEFT_NO_RANGE) for no range check. */
typedef struct weft_param_spec {
    const char *name;
    uint32_t type;              /* weft_param_type */
    uint32_t flags;             /* WEFT_PARAM_* flags */
    const char *default_text;
    double min, max;
    const char *unit;           /* "Hz", "s", "" ... shown by `weft stages` */
    const char *choices;        /* CHOICE only: alternatives separated by '|' */
    const char *help;           /* one sentence */
} weft_param_spec;

#define WEFT_NO_RANGE 1.0, 0.0

/* Ends a parameter array (a designated initializer, so -Wextra stays quiet). */
#define WEFT_PARAMS_END { .name = NULL }

/* The value of one parameter as given to init. Every declared parameter is present, in the
 * order of the declaration; `given` is 0 when the value is the default (or a learned parameter
 * not yet learned, in which case the value is empty). Pointers are owned by the host and stay
 * valid only until init returns: copy what you keep. */
typedef struct weft_param {
    const char *name;
    uint32_t type;
    uint32_t given;
    double number;              /* NUMBER, INTEGER, BOOLEAN */
    const char *text;           /* STRING, CHOICE */
    const double *values;       /* NUMBERS, MATRIX: rows * cols entries, row-major */
    uint32_t rows, cols;
    const char *const *strings; /* STRINGS */
    uint32_t n_strings;
} weft_param;

typedef struct weft_params {
    const weft_param *items;
    uint32_t count;
} weft_params;

/* ---- streams, blocks, markers, windows, results ------------------------------------------ */

typedef enum weft_stream_kind {
    WEFT_STREAM_SAMPLES = 1,    /* frames at a nominal rate */
    WEFT_STREAM_RESULTS         /* a readout's results; channels = values per result */
} weft_stream_kind;

/* What flows on one edge. For an output layout the stage fills every field in init; label
 * strings then belong to the stage and must stay valid until destroy. An input layout's
 * strings stay valid until the stage's destroy too, so a stage that keeps its input's
 * channels may simply hand on in[0].labels. */
typedef struct weft_layout {
    const char *name;           /* the producing stage's name in the graph (host fills in) */
    uint32_t kind;              /* weft_stream_kind */
    uint32_t channels;
    double rate;                /* nominal frames per second; 0 for RESULTS */
    const char *const *labels;  /* `channels` labels (channel names, class names), or NULL */
    uint32_t max_frames;        /* largest block on this stream. Before init the host sets the
                                 * output's to in[0]'s (sources: the largest request); a stage
                                 * that changes the rate sets its own bound. */
    uint32_t bounded;           /* source only: 1 if the stream ends by itself (a file) */
} weft_layout;

/* An irregular event attached to the sample it belongs to. */
typedef struct weft_marker {
    const char *label;          /* valid until the callback that received or produced it returns */
    uint64_t index;             /* sample index on the stream that carries it */
    double duration;            /* seconds; 0 for an instant */
} weft_marker;

/* A run of frames of one stream. For an input block everything is read-only. For an output
 * block the host sets data (room for `capacity` frames), channels, first_index, first_time and
 * the marker buffer (room for marker_capacity markers); the stage sets frames and n_markers.
 * Before a filter's process, the host copies the input's markers into the output block: a stage
 * that keeps the rate leaves them, one that changes it (a resampler) maps their indices. */
typedef struct weft_block {
    float *data;
    uint32_t frames;
    uint32_t capacity;
    uint32_t channels;
    uint32_t n_markers;
    uint64_t first_index;       /* sample index of the first frame */
    double first_time;          /* host clock (s) of the first frame; sources may stamp it */
    weft_marker *markers;
    uint32_t marker_capacity;
    uint32_t reserved;
} weft_block;

/* One input's view for a query or an epoch: `frames` contiguous interleaved frames ending just
 * before sample end_index. Owned by the host; valid until the callback returns. */
typedef struct weft_window {
    const float *data;
    uint32_t frames;
    uint32_t channels;
    double rate;
    uint64_t end_index;         /* one past the last frame's sample index */
} weft_window;

/* What a readout returns. The host provides `values` with room for `count` entries, where count
 * is the channels of the readout's output layout, and fills in the other fields. Class
 * probabilities must be in [0, 1] and sum to 1. */
typedef struct weft_result {
    double *values;
    uint32_t count;
    uint32_t reserved;
    double time;                /* query time, seconds of stream time */
    uint64_t index;             /* end_index of the first input's window */
    uint64_t seq;               /* 0, 1, 2 ... per readout */
    const char *trigger;        /* marker label that caused the query, or NULL (periodic) */
} weft_result;

/* Labelled epochs for fit: for epoch e and input i, window[e * n_in + i] holds the data the
 * stage's input i carried over the epoch, class[e] its class (0 .. n_classes - 1). Epochs are
 * in chronological order. Owned by the host; valid until fit returns. */
typedef struct weft_epochs {
    uint32_t n_epochs;
    uint32_t n_in;
    uint32_t n_classes;
    uint32_t reserved;
    const uint32_t *classes;
    const char *const *class_names;
    const weft_window *windows;
} weft_epochs;

/* Where fit writes learned parameters; each must be a declared parameter of the stage (any
 * flag), with a matching type. The host copies the values. Returns WEFT_OK or WEFT_EINVAL. */
typedef struct weft_param_sink {
    void *ctx;
    int (*number)(void *ctx, const char *name, double value);
    int (*numbers)(void *ctx, const char *name, const double *values, uint32_t n);
    int (*matrix)(void *ctx, const char *name, const double *values, uint32_t rows,
                  uint32_t cols);
    int (*strings)(void *ctx, const char *name, const char *const *values, uint32_t n);
} weft_param_sink;

/* ---- host services ----------------------------------------------------------------------- */

enum { WEFT_LOG_DEBUG = 0, WEFT_LOG_INFO = 1, WEFT_LOG_WARN = 2 };
enum { WEFT_WATCH_READ = 1u, WEFT_WATCH_WRITE = 2u };

/* Given to init; valid until destroy returns. Every function may be called from any callback
 * of the stage that received it. error() records the reason of a failure: say what is wrong,
 * the value, and what would be right, in one sentence; the host adds the stage name. Call it
 * once per failure, before returning a negative code. log() is for sparse notices; in process
 * and query it is rate-limited by the host and never blocks. */
typedef struct weft_host {
    uint32_t abi_major, abi_minor;
    void *ctx;                                  /* the host's; do not touch */
    const char *stage_name;                     /* the stage's name in the graph */
    const char *graph_dir;                      /* folder of the graph file, for relative paths */
    void (*error)(const struct weft_host *host, const char *fmt, ...);
    void (*log)(const struct weft_host *host, int level, const char *fmt, ...);
    /* Like error(), for a problem with one parameter: the host points at its line and column
     * in the graph file ("grip.yaml:14:12: stage 'eeg_mu': high (140 Hz) must be ..."). */
    void (*param_error)(const struct weft_host *host, const char *param, const char *fmt, ...);
    /* Sources that wait on a descriptor (socket, pipe) register it in init, so the host can
     * poll() instead of spinning; process is then called when it is ready (or on the clock). */
    int (*watch_fd)(const struct weft_host *host, int fd, uint32_t events);
    /* WEFT_HOST_* bits: how the host is driving this instance. */
    uint32_t flags;
} weft_host;

/* host->flags: init is only validating (`weft check`): check everything, but create,
 * truncate or connect nothing -- no output file, no socket, no device. */
#define WEFT_HOST_CHECK_ONLY 1u

/* ---- the descriptor ---------------------------------------------------------------------- */

typedef struct weft_stage_api {
    uint32_t abi_major;         /* WEFT_ABI_MAJOR the plugin was built with */
    uint32_t abi_minor;         /* WEFT_ABI_MINOR the plugin was built with */
    uint32_t struct_size;       /* sizeof(weft_stage_api) the plugin was built with */
    uint32_t roles;             /* WEFT_ROLE_* bits */
    const char *name;           /* plugin name, as written after `plugin:` in a graph */
    const char *version;        /* the stage's own version, e.g. "1.2.0" */
    const char *summary;        /* one line for `weft stages` */
    const weft_param_spec *params;  /* declared parameters, ending with { .name = NULL } */
    uint32_t min_inputs, max_inputs;  /* sources: 0, 0 */

    /* Called once, on the thread that will drive the stage, before any other callback.
     * `in` holds the layouts of the n_in inputs (channels, rate, labels, max_frames). Validate
     * parameters and layouts, allocate everything the stage will ever need, and fill *out: for
     * sources and filters the stream it produces, for readouts kind RESULTS with the class
     * names as labels; sinks leave it. A fittable stage must initialise without its learned
     * parameters (given == 0) and state its output layout all the same. May allocate and do
     * I/O (open a file, a socket). On failure: host->error(), free what was taken, return < 0;
     * destroy is then not called. */
    int (*init)(const weft_host *host, const weft_params *params, const weft_layout *in,
                uint32_t n_in, weft_layout *out, void **self);

    /* The streaming path, called once per block in stream order on the run loop's thread.
     *   filter: in[0] holds the new frames; write exactly in[0].frames frames (or, if the rate
     *           changes, as many as are due) into out. Causal: state carries across calls, and
     *           any split of a stream into blocks must give bit-identical output.
     *   source: in is NULL, n_in 0; write up to out->capacity frames (the host's request) and
     *           any markers. Return WEFT_END when a bounded stream is over (frames
     *           written in that same call are still used).
     *   sink:   in[i].frames is 0 for inputs without new data this round; out is NULL.
     *   readout: optional (may be NULL); sees every block of input in[i] before queries.
     * Filters and readouts must not allocate, block, lock or do I/O here. Sources and sinks
     * do their I/O without blocking (non-blocking descriptors, buffers filled in init). */
    int (*process)(void *self, const weft_block *in, uint32_t n_in, weft_block *out);

    /* Readouts only: compute one result from win[0 .. n_in-1], one window per input, each of
     * its own length and rate, all ending at the query time. Write out->count values. Must
     * not allocate, block, lock or do I/O. Return WEFT_ESTATE if not fitted. */
    int (*query)(void *self, const weft_window *win, uint32_t n_in, weft_result *out);

    /* Fittable stages only (else NULL): learn from labelled epochs of the stage's inputs and
     * write the learned values through `learned`. Called off the real-time path (by
     * `weft fit`); may allocate. The host re-initialises the stage with the learned values
     * afterwards, so fit need not update self. Return WEFT_EFIT with host->error() saying
     * what went wrong (which class, how many trials, what to change). */
    int (*fit)(void *self, const weft_epochs *epochs, const weft_param_sink *learned);

    /* Sinks only (else NULL): one result of the readout feeding input `input`. Must not block;
     * buffer and write without waiting. */
    int (*deliver)(void *self, uint32_t input, const weft_result *result);

    /* Release everything init took. Called once; self is not used afterwards. May do I/O
     * (close a file). */
    void (*destroy)(void *self);
} weft_stage_api;

/* The one symbol a plugin exports. */
typedef const weft_stage_api *(*weft_stage_entry_fn)(void);
#define WEFT_STAGE_ENTRY_SYMBOL "weft_stage_entry"

#if defined(__GNUC__)
#define WEFT_EXPORT __attribute__((visibility("default")))
#else
#define WEFT_EXPORT
#endif

/* Defines the entry function: WEFT_STAGE(my_api) after `static const weft_stage_api my_api`. */
#define WEFT_STAGE(api)                                                                        \
    WEFT_EXPORT const weft_stage_api *weft_stage_entry(void);                                  \
    WEFT_EXPORT const weft_stage_api *weft_stage_entry(void) { return &(api); }

/* Fills the version fields of a descriptor initializer. */
#define WEFT_API_HEADER                                                                        \
    .abi_major = WEFT_ABI_MAJOR, .abi_minor = WEFT_ABI_MINOR,                                  \
    .struct_size = (uint32_t)sizeof(weft_stage_api)

/* C11 has no M_PI. */
#define WEFT_PI 3.14159265358979323846

/* ---- small helpers for init -------------------------------------------------------------- */

/* The parameter called `name`, or NULL if the stage did not declare it. */
static inline const weft_param *weft_param_get(const weft_params *p, const char *name)
{
    for (uint32_t i = 0; i < p->count; i++)
        if (strcmp(p->items[i].name, name) == 0)
            return &p->items[i];
    return NULL;
}

static inline double weft_param_number(const weft_params *p, const char *name)
{
    const weft_param *v = weft_param_get(p, name);
    return v ? v->number : 0.0;
}

static inline const char *weft_param_text(const weft_params *p, const char *name)
{
    const weft_param *v = weft_param_get(p, name);
    return v && v->text ? v->text : "";
}

static inline int weft_param_given(const weft_params *p, const char *name)
{
    const weft_param *v = weft_param_get(p, name);
    return v ? (int)v->given : 0;
}

#ifdef __cplusplus
}
#endif

#endif /* WEFT_STAGE_H */
