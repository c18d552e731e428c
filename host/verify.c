/* verify: the conformance checks, in the order a stage's life runs, and the report. */
#include "verify.h"

#include <ctype.h>
#include <dlfcn.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "params.h"
#include "plugin.h"
#include "verify_child.h"

enum {
    R_LOAD, R_ABI, R_DESCRIPTOR, R_PARAMS, R_INIT, R_FIT, R_BAD_PARAMS, R_BAD_LAYOUTS,
    R_CHUNKING, R_DETERMINISM, R_NO_ALLOC, R_FINITE, R_READOUT_VALUES, R_DESTROY, R_COUNT
};

static const char *const rule_names[R_COUNT] = {
    "load", "abi", "descriptor", "params", "init", "fit", "bad-params", "bad-layouts",
    "chunking", "determinism", "no-alloc", "finite", "readout-values", "destroy",
};

#define MAX_ATTEMPTS 64
#define ATTEMPT_STEPS 4         /* calls of the streaming path after a successful odd init */
#define REFERENCE_BLOCK 256
#define DEFAULT_MAX_FRAMES 256
#define SUM_TOLERANCE 1e-6
#define PARAMS_TEXT_MAX 16384
/* What node_fail() says when a stage returned an error without calling host->error(). */
#define NO_REASON "failed without saying why"

typedef struct checker {
    const char *file;
    verify_options opt;
    verify_setup setup;             /* the default run */
    const weft_stage_api *api;
    uint32_t role;
    unsigned timeout;
    char missing[DIAG_MAX];         /* why init cannot run: a required parameter is missing */
    char params_text[PARAMS_TEXT_MAX];  /* every parameter written out, for variations */
    param_set resolved;
    int chosen_params;              /* the checker changed a parameter to get init to work */
    check_result res[R_COUNT];
    char *label_block;              /* "ch1", "ch2" ... for the layouts the checker makes */
    const char **labels;
} checker;

/* ---- helpers ------------------------------------------------------------------------------ */

static void skip_rest(checker *c, int from, const char *why)
{
    for (int i = from; i < R_COUNT; i++)
        if (!c->res[i].detail[0])
            check_set(&c->res[i], CHECK_SKIP, "%s", why);
}

static int has_role(const checker *c, uint32_t roles) { return (c->role & roles) != 0; }

static const char *role_text(uint32_t role)
{
    return role_name(role);
}

/* Scalp positions of the 10-10 system, sensorimotor ones first, as a montage would have
 * them (stages that look channels up by name need real names); then "ch17", "ch18" ... */
static const char *const scalp_names[] = {
    "C3", "C4", "Cz", "FC3", "FC4", "CP3", "CP4", "Pz", "FCz", "CPz", "C1", "C2", "C5", "C6",
    "FC1", "FC2",
};

static int make_labels(checker *c, uint32_t max_channels)
{
    const uint32_t n_scalp = sizeof scalp_names / sizeof scalp_names[0];
    c->label_block = malloc((size_t)max_channels * 16);
    c->labels = malloc((size_t)max_channels * sizeof *c->labels);
    if (!c->label_block || !c->labels)
        return -1;
    for (uint32_t i = 0; i < max_channels; i++) {
        char *label = c->label_block + (size_t)i * 16;
        if (i < n_scalp)
            snprintf(label, 16, "%s", scalp_names[i]);
        else
            snprintf(label, 16, "ch%u", (unsigned)(i + 1));
        c->labels[i] = label;
    }
    return 0;
}

static weft_layout samples_layout(const checker *c, uint32_t channels, double rate)
{
    return (weft_layout){ .name = "input", .kind = WEFT_STREAM_SAMPLES, .channels = channels,
                          .rate = rate, .labels = c->labels, .max_frames = DEFAULT_MAX_FRAMES };
}

static void default_inputs(checker *c, verify_setup *s)
{
    static const char *const classes[] = { "rest", "grip" };
    if (c->opt.n_in) {
        s->n_in = c->opt.n_in;
        memcpy(s->in, c->opt.in, c->opt.n_in * sizeof *s->in);
        for (uint32_t k = 0; k < s->n_in; k++)
            if (!s->in[k].labels && s->in[k].kind == WEFT_STREAM_SAMPLES)
                s->in[k].labels = c->labels;
        return;
    }
    s->n_in = 0;
    if (c->role == WEFT_ROLE_SOURCE)
        return;
    uint32_t n = c->api->min_inputs ? c->api->min_inputs : 1;
    if (n > VERIFY_MAX_INPUTS)
        n = VERIFY_MAX_INPUTS;
    for (uint32_t k = 0; k < n; k++)
        s->in[k] = samples_layout(c, k == 1 && c->role == WEFT_ROLE_READOUT ? 2 : 4,
                                  k == 1 && c->role == WEFT_ROLE_READOUT ? 1000 : 250);
    s->n_in = n;
    /* A sink that only takes results gets a readout's output. */
    if (c->role == WEFT_ROLE_SINK && !c->api->process && c->api->deliver)
        s->in[0] = (weft_layout){ .name = "input", .kind = WEFT_STREAM_RESULTS, .channels = 2,
                                  .labels = classes, .max_frames = 1 };
}

static void describe_layout(const weft_layout *l, char *buf, size_t size)
{
    if (l->kind == WEFT_STREAM_RESULTS)
        snprintf(buf, size, "%u values", l->channels);
    else
        snprintf(buf, size, "%u ch at %g Hz", l->channels, l->rate);
}

static void describe_inputs(const verify_setup *s, char *buf, size_t size)
{
    size_t len = 0;
    buf[0] = 0;
    if (s->n_in == 0)
        snprintf(buf, size, "none");
    for (uint32_t k = 0; k < s->n_in && len < size; k++) {
        char one[64];
        describe_layout(&s->in[k], one, sizeof one);
        len += (size_t)snprintf(buf + len, size - len, "%s%s", k ? " + " : "", one);
    }
}

/* ---- load, abi, descriptor ---------------------------------------------------------------- */

static void check_load(void *ctx, check_result *r)
{
    const char *file = ctx;
    void *h = dlopen(file, RTLD_NOW | RTLD_LOCAL);
    if (!h) {
        check_set(r, CHECK_FAIL, "cannot load: %s", dlerror());
        return;
    }
    dlerror();
    void *sym = dlsym(h, WEFT_STAGE_ENTRY_SYMBOL);
    if (!sym) {
        check_set(r, CHECK_FAIL, "no %s() symbol: define it with WEFT_STAGE(api) and keep it "
                  "visible", WEFT_STAGE_ENTRY_SYMBOL);
        return;
    }
    weft_stage_entry_fn entry;
    memcpy(&entry, &sym, sizeof entry);
    const weft_stage_api *api = entry();
    if (!api) {
        check_set(r, CHECK_FAIL, "%s() returned NULL", WEFT_STAGE_ENTRY_SYMBOL);
        return;
    }
    /* Read every string the host will read, so a bad pointer crashes here, in the child. */
    size_t chars = api->name ? strlen(api->name) : 0;
    chars += api->version ? strlen(api->version) : 0;
    chars += api->summary ? strlen(api->summary) : 0;
    if (api->abi_major == WEFT_ABI_MAJOR)
        for (const weft_param_spec *s = api->params; s && s->name; s++)
            chars += strlen(s->name) + (s->default_text ? strlen(s->default_text) : 0) +
                     (s->choices ? strlen(s->choices) : 0) + (s->help ? strlen(s->help) : 0);
    check_set(r, CHECK_PASS, "dlopen(RTLD_NOW) and %s() work; descriptor readable (%zu "
              "characters of text)", WEFT_STAGE_ENTRY_SYMBOL, chars);
}

static int open_in_parent(checker *c)
{
    void *h = dlopen(c->file, RTLD_NOW | RTLD_LOCAL);
    void *sym = h ? dlsym(h, WEFT_STAGE_ENTRY_SYMBOL) : NULL;
    if (!sym)
        return -1;
    weft_stage_entry_fn entry;
    memcpy(&entry, &sym, sizeof entry);
    c->api = entry(); /* the handle stays open for the checker's lifetime */
    return c->api ? 0 : -1;
}

static int check_abi(checker *c)
{
    const weft_stage_api *a = c->api;
    check_result *r = &c->res[R_ABI];
    size_t minimum = offsetof(weft_stage_api, destroy) + sizeof a->destroy;
    if (a->abi_major != WEFT_ABI_MAJOR) {
        check_set(r, CHECK_FAIL, "built for stage ABI %u.%u, this host speaks %d.%d; rebuild "
                  "against this weft's SDK", a->abi_major, a->abi_minor, WEFT_ABI_MAJOR,
                  WEFT_ABI_MINOR);
        return -1;
    }
    if (a->struct_size < minimum) {
        check_set(r, CHECK_FAIL, "descriptor is %u bytes, ABI %d.0 has %zu; fill it with "
                  "WEFT_API_HEADER", a->struct_size, WEFT_ABI_MAJOR, minimum);
        return -1;
    }
    check_set(r, CHECK_PASS, "stage ABI %u.%u, host %d.%d; descriptor %u bytes%s", a->abi_major,
              a->abi_minor, WEFT_ABI_MAJOR, WEFT_ABI_MINOR, a->struct_size,
              a->abi_minor > WEFT_ABI_MINOR ? " (newer minor: callbacks past this host's "
                                              "are not used)" : "");
    return 0;
}

static int check_descriptor(checker *c)
{
    diag d = { 0 };
    if (plugin_check_api(c->api, c->file, &d)) {
        check_set(&c->res[R_DESCRIPTOR], CHECK_FAIL, "%s", d.msg);
        return -1;
    }
    c->role = c->api->roles & ~(uint32_t)WEFT_ROLE_FITTABLE;
    check_set(&c->res[R_DESCRIPTOR], CHECK_PASS, "'%s' %s, %s%s, %u..%u inputs", c->api->name,
              c->api->version, role_text(c->role),
              c->api->roles & WEFT_ROLE_FITTABLE ? "+fittable" : "", c->api->min_inputs,
              c->api->max_inputs);
    return 0;
}

/* ---- params ------------------------------------------------------------------------------- */

static int is_numeric(uint32_t type)
{
    return type == WEFT_PARAM_NUMBER || type == WEFT_PARAM_INTEGER ||
           type == WEFT_PARAM_NUMBERS || type == WEFT_PARAM_MATRIX;
}

static int bad_name(const char *name)
{
    if (!name[0] || !isalpha((unsigned char)name[0]))
        return 1;
    for (const char *p = name; *p; p++)
        if (!isalnum((unsigned char)*p) && *p != '_')
            return 1;
    return 0;
}

static int check_choices(const weft_param_spec *s, check_result *r)
{
    if (!s->choices || !s->choices[0])
        return check_set(r, CHECK_FAIL, "'%s' is a choice without choices (\"a|b|c\")", s->name);
    for (const char *p = s->choices; *p; p++)
        if ((*p == '|' && (p == s->choices || p[1] == '|' || p[1] == 0)))
            return check_set(r, CHECK_FAIL, "'%s': choices \"%s\" has an empty alternative",
                             s->name, s->choices);
    return 0;
}

static int check_one_spec(const checker *c, const weft_param_spec *s, check_result *r)
{
    if (bad_name(s->name))
        return check_set(r, CHECK_FAIL, "parameter name '%s' is not a plain identifier "
                         "(letters, digits, _)", s->name);
    if (s->flags & ~(uint32_t)WEFT_PARAM_LEARNED)
        return check_set(r, CHECK_FAIL, "'%s' has unknown flags 0x%x", s->name, s->flags);
    if ((s->flags & WEFT_PARAM_LEARNED) && !(c->api->roles & WEFT_ROLE_FITTABLE))
        return check_set(r, CHECK_FAIL, "'%s' is learned, but the stage is not fittable",
                         s->name);
    if (s->type == WEFT_PARAM_CHOICE && check_choices(s, r))
        return -1;
    if (is_numeric(s->type) && s->min <= s->max) {
        if (!isfinite(s->min) || !isfinite(s->max))
            return check_set(r, CHECK_FAIL, "'%s' has a range that is not finite", s->name);
        if (s->min == s->max)
            return check_set(r, CHECK_FAIL, "'%s' has the range %g..%g, which allows one "
                             "value; for no range use WEFT_NO_RANGE", s->name, s->min, s->max);
        if (s->type == WEFT_PARAM_INTEGER && (floor(s->min) != s->min || floor(s->max) != s->max))
            return check_set(r, CHECK_FAIL, "integer '%s' has the range %g..%g; use whole "
                             "numbers", s->name, s->min, s->max);
    }
    for (const weft_param_spec *t = c->api->params; t != s; t++)
        if (!strcmp(t->name, s->name))
            return check_set(r, CHECK_FAIL, "parameter '%s' is declared twice", s->name);
    return 0;
}

/* A default is graph text: parse it as the host will, alone, against its own declaration. */
static int check_default(const weft_param_spec *s, check_result *r)
{
    weft_param_spec one[2] = { *s, { 0 } };
    ydoc doc;
    diag d = { 0 };
    param_set ps;
    if (ydoc_load(&doc, "default", "{}", &d))
        return check_set(r, CHECK_FAIL, "%s", d.msg);
    int rc = param_set_resolve(&ps, one, doc.root, &doc, "stage", &d);
    param_set_free(&ps);
    ydoc_free(&doc);
    /* The resolver's message names the stage and the place in the text; the reason is last. */
    const char *why = d.msg, *p;
    while ((p = strstr(why, "': ")))
        why = p + 3;
    if (rc)
        return check_set(r, CHECK_FAIL, "the default of '%s' (\"%s\") is not valid: %s",
                         s->name, s->default_text, why);
    return 0;
}

/* Write every resolved parameter back as a YAML map, so variations can replace one. */
static void write_params(checker *c, const char *replace, const char *value, char *buf,
                         size_t size)
{
    size_t len = (size_t)snprintf(buf, size, "{");
    for (uint32_t i = 0; i < c->resolved.count && len < size; i++) {
        const weft_param *p = &c->resolved.items[i];
        char text[PARAMS_TEXT_MAX / 2];
        if (replace && !strcmp(p->name, replace))
            snprintf(text, sizeof text, "%s", value);
        else if (!p->given && (c->api->params[i].flags & WEFT_PARAM_LEARNED))
            continue;
        else if (param_format(p, text, sizeof text) >= sizeof text)
            continue; /* too long to vary; the default stands */
        len += (size_t)snprintf(buf + len, size - len, "%s %s: %s", len > 1 ? "," : "",
                                p->name, text);
    }
    if (len < size)
        snprintf(buf + len, size - len, " }");
}

static int check_params(checker *c)
{
    check_result *r = &c->res[R_PARAMS];
    unsigned n = 0, required = 0;
    for (const weft_param_spec *s = c->api->params; s && s->name; s++, n++) {
        if (check_one_spec(c, s, r))
            return 0;
        if (s->default_text && check_default(s, r))
            return 0;
        if (!s->default_text && !(s->flags & WEFT_PARAM_LEARNED))
            required++;
    }
    /* The user's values, resolved as a graph's would be. */
    ydoc doc;
    diag d = { 0 };
    if (ydoc_load(&doc, "--params", c->opt.params ? c->opt.params : "{}", &d) ||
        param_set_resolve(&c->resolved, c->api->params, doc.root, &doc, c->api->name, &d)) {
        ydoc_free(&doc);
        if (strstr(d.msg, "is required")) {
            check_set(r, CHECK_PASS, "%u declared, defaults valid; %u required", n, required);
            snprintf(c->missing, sizeof c->missing, "%s", d.msg);
            return 0;
        }
        fprintf(stderr, "weft: --params: %s\n", d.msg);
        return -1;
    }
    ydoc_free(&doc);
    write_params(c, NULL, NULL, c->params_text, sizeof c->params_text);
    check_set(r, CHECK_PASS, "%u declared: names, types, ranges and defaults valid%s", n,
              required ? "; required ones given" : "");
    return 0;
}

/* ---- init and fit ------------------------------------------------------------------------- */

typedef struct run_ctx {
    checker *c;
    verify_setup s;
} run_ctx;

static void output_text(const vrun *r, char *buf, size_t size)
{
    const weft_layout *o = stage_driver_out(&r->sd);
    if (r->s->role == WEFT_ROLE_SINK)
        snprintf(buf, size, "nothing (sink)");
    else if (r->s->role == WEFT_ROLE_READOUT)
        snprintf(buf, size, "%u values", o->channels);
    else
        snprintf(buf, size, "%u ch at %g Hz, blocks up to %u", o->channels, o->rate,
                 o->max_frames);
}

static void check_init(void *ctx, check_result *r)
{
    run_ctx *x = ctx;
    vrun run;
    diag d = { 0 };
    char in[160], out[96];
    describe_inputs(&x->s, in, sizeof in);
    if (vrun_open(&run, &x->s, 64, &d)) {
        check_set(r, CHECK_FAIL, "init with %s and the given parameters failed: %s", in,
                  d.msg);
        return;
    }
    output_text(&run, out, sizeof out);
    vrun_close(&run);
    check_set(r, CHECK_PASS, "%s -> %s", in, out);
}

static void check_fit(void *ctx, check_result *r)
{
    run_ctx *x = ctx;
    vrun run;
    diag d = { 0 };
    x->s.fit = 1;
    if (vrun_open(&run, &x->s, 64, &d)) {
        check_set(r, CHECK_FAIL, "fit on synthetic epochs (classes differ in one channel's "
                  "variance) failed: %s", d.msg);
        return;
    }
    const param_set *ps = &run.sd.n->params;
    for (uint32_t i = 0; i < ps->count; i++)
        if ((x->s.api->params[i].flags & WEFT_PARAM_LEARNED) && !ps->items[i].given) {
            check_set(r, CHECK_FAIL, "fit returned but did not write learned parameter '%s'",
                      ps->items[i].name);
            vrun_close(&run);
            return;
        }
    vrun_close(&run);
    check_set(r, CHECK_PASS, "fitted on 40 synthetic epochs; re-initialised with what it "
              "learned");
}

/* ---- bad parameters and layouts ----------------------------------------------------------- */

typedef struct attempt {
    checker *c;
    verify_setup s;
    char what[160];
    char params[PARAMS_TEXT_MAX];
} attempt;

/* An odd but allowed configuration: init may refuse it with a message, or accept it and then
 * stream; it must not crash, hang, or fail silently. */
static void check_attempt(void *ctx, check_result *r)
{
    attempt *a = ctx;
    vrun run;
    diag d = { 0 };
    if (vrun_open(&run, &a->s, a->s.in[0].max_frames < 64 ? 1 : 64, &d)) {
        vrun_close(&run);
        if (strstr(d.msg, NO_REASON))
            check_set(r, CHECK_FAIL, "init failed without calling host->error()");
        else
            check_set(r, CHECK_SKIP, "refused: %s", d.msg); /* SKIP here: refused cleanly */
        return;
    }
    for (int i = 0; i < ATTEMPT_STEPS; i++) {
        diag sd = { 0 };
        int rc = vrun_step(&run, &sd);
        if (rc == VRUN_BROKE || (rc < 0 && strstr(sd.msg, NO_REASON))) {
            check_set(r, CHECK_FAIL, "%s", sd.msg);
            vrun_close(&run);
            return;
        }
        if (rc <= 0)
            break;
    }
    vrun_close(&run);
    check_set(r, CHECK_PASS, "accepted");
}

static int run_attempts(checker *c, attempt *list, unsigned n, int rule, const char *kind)
{
    unsigned accepted = 0, refused = 0;
    for (unsigned i = 0; i < n; i++) {
        check_result one;
        verify_in_child(check_attempt, &list[i], c->timeout, 0, &one);
        if (one.status == CHECK_FAIL)
            return check_set(&c->res[rule], CHECK_FAIL, "with %s: %s", list[i].what,
                             one.detail);
        if (one.status == CHECK_PASS)
            accepted++;
        else
            refused++;
    }
    check_set(&c->res[rule], CHECK_PASS, "%u %s: %u accepted and streamed, %u refused with a "
              "message", n, kind, accepted, refused);
    return 0;
}

static unsigned add_attempt(checker *c, attempt *list, unsigned n, const weft_param_spec *s,
                            const char *value)
{
    if (n >= MAX_ATTEMPTS)
        return n;
    attempt *a = &list[n];
    a->c = c;
    a->s = c->setup;
    snprintf(a->what, sizeof a->what, "%s = %s", s->name, value);
    write_params(c, s->name, value, a->params, sizeof a->params);
    a->s.params = a->params;
    return n + 1;
}

static void format_number(const weft_param_spec *s, double v, char *buf, size_t size)
{
    if (s->type == WEFT_PARAM_INTEGER)
        snprintf(buf, size, "%.0f", v);
    else
        snprintf(buf, size, "%.17g", v);
}

static unsigned param_attempts(checker *c, const weft_param_spec *s, attempt *list, unsigned n)
{
    char a[64], b[64], item[160];
    int ranged = s->min <= s->max;
    switch (s->type) {
    case WEFT_PARAM_NUMBER:
    case WEFT_PARAM_INTEGER:
        format_number(s, ranged ? s->min : 0, a, sizeof a);
        format_number(s, ranged ? s->max : 1e6, b, sizeof b);
        n = add_attempt(c, list, n, s, a);
        n = add_attempt(c, list, n, s, b);
        if (!ranged)
            n = add_attempt(c, list, n, s, "-1");
        return n;
    case WEFT_PARAM_BOOLEAN:
        n = add_attempt(c, list, n, s, "true");
        return add_attempt(c, list, n, s, "false");
    case WEFT_PARAM_CHOICE:
        for (const char *p = s->choices; p && *p;) {
            const char *bar = strchr(p, '|');
            int len = bar ? (int)(bar - p) : (int)strlen(p);
            snprintf(item, sizeof item, "\"%.*s\"", len, p);
            n = add_attempt(c, list, n, s, item);
            p = bar ? bar + 1 : NULL;
        }
        return n;
    case WEFT_PARAM_STRING:
        return add_attempt(c, list, n, s, "\"\"");
    case WEFT_PARAM_NUMBERS:
        format_number(s, ranged ? s->max : 1, a, sizeof a);
        snprintf(item, sizeof item, "[%s]", a);
        n = add_attempt(c, list, n, s, "[]");
        return add_attempt(c, list, n, s, item);
    case WEFT_PARAM_MATRIX:
        format_number(s, ranged ? s->min : 0, a, sizeof a);
        snprintf(item, sizeof item, "[[%s]]", a);
        n = add_attempt(c, list, n, s, "[]");
        return add_attempt(c, list, n, s, item);
    case WEFT_PARAM_STRINGS:
        n = add_attempt(c, list, n, s, "[]");
        return add_attempt(c, list, n, s, "[\"\"]");
    }
    return n;
}

static void check_bad_params(checker *c)
{
    attempt *list = calloc(MAX_ATTEMPTS, sizeof *list);
    if (!list) {
        check_set(&c->res[R_BAD_PARAMS], CHECK_FAIL, "out of memory");
        return;
    }
    unsigned n = 0;
    for (const weft_param_spec *s = c->api->params; s && s->name; s++)
        if (!(s->flags & WEFT_PARAM_LEARNED))
            n = param_attempts(c, s, list, n);
    if (n == 0)
        check_set(&c->res[R_BAD_PARAMS], CHECK_SKIP, "no parameters to vary");
    else
        run_attempts(c, list, n, R_BAD_PARAMS, "values at range ends, each choice, empty "
                     "lists");
    free(list);
}

static unsigned layout_attempt(checker *c, attempt *list, unsigned n, const char *what,
                               weft_layout l, uint32_t n_in)
{
    attempt *a = &list[n];
    a->c = c;
    a->s = c->setup;
    a->s.seconds = c->setup.window + 0.5;
    snprintf(a->what, sizeof a->what, "%s", what);
    a->s.n_in = n_in;
    for (uint32_t k = 0; k < n_in; k++)
        a->s.in[k] = l;
    return n + 1;
}

static void check_bad_layouts(checker *c)
{
    attempt *list = calloc(16, sizeof *list);
    if (!list) {
        check_set(&c->res[R_BAD_LAYOUTS], CHECK_FAIL, "out of memory");
        return;
    }
    weft_layout base = c->setup.in[0];
    uint32_t n_in = c->setup.n_in;
    unsigned n = 0;
    weft_layout l;
    if (base.kind == WEFT_STREAM_SAMPLES) {
        l = base;
        l.channels = 1;
        n = layout_attempt(c, list, n, "1 channel", l, n_in);
        l.channels = 64;
        n = layout_attempt(c, list, n, "64 channels", l, n_in);
        l = base;
        l.labels = NULL;
        n = layout_attempt(c, list, n, "no channel labels (labels = NULL)", l, n_in);
        l = base;
        l.rate = 1;
        n = layout_attempt(c, list, n, "a rate of 1 Hz", l, n_in);
        l.rate = 20000;
        n = layout_attempt(c, list, n, "a rate of 20000 Hz", l, n_in);
        l = base;
        l.max_frames = 1;
        n = layout_attempt(c, list, n, "blocks of at most 1 frame", l, n_in);
    }
    uint32_t most = c->api->max_inputs < 3 ? c->api->max_inputs : 3;
    if (c->role != WEFT_ROLE_FILTER && most > n_in) {
        n = layout_attempt(c, list, n, "more inputs", base, most);
        list[n - 1].s.in[most - 1] = samples_layout(c, 3, 500);
        snprintf(list[n - 1].what, sizeof list[n - 1].what, "%u inputs, the last 3 ch at 500 Hz",
                 most);
    }
    if (n == 0)
        check_set(&c->res[R_BAD_LAYOUTS], CHECK_SKIP, "no layout to vary");
    else
        run_attempts(c, list, n, R_BAD_LAYOUTS, "odd layouts (1 and 64 channels, no labels, "
                     "1 Hz and 20 kHz, 1-frame blocks)");
    free(list);
}

/* ---- streaming behaviour ------------------------------------------------------------------ */

static int open_and_run(vrun *run, const verify_setup *s, uint32_t block, check_result *r)
{
    diag d = { 0 };
    if (vrun_open(run, s, block, &d) || vrun_all(run, &d) < 0) {
        check_set(r, CHECK_FAIL, "blocks of %u: %s", block, d.msg);
        return -1;
    }
    return 0;
}

/* The first difference between two runs, as a sentence; 0 if they are the same. */
static int compare_runs(const vrun *a, const vrun *b, const char *a_name, const char *b_name,
                        check_result *r)
{
    if (a->out_frames != b->out_frames)
        return check_set(r, CHECK_FAIL, "%s gave %zu frames, %s %zu", b_name, b->out_frames,
                         a_name, a->out_frames);
    size_t samples = a->out_frames * a->out_channels;
    for (size_t i = 0; i < samples; i++)
        if (memcmp(&a->out[i], &b->out[i], sizeof(float)))
            return check_set(r, CHECK_FAIL, "frame %zu, channel %zu: %s gave %.9g, %s %.9g",
                             i / a->out_channels, i % a->out_channels, b_name, b->out[i],
                             a_name, a->out[i]);
    if (a->n_markers != b->n_markers)
        return check_set(r, CHECK_FAIL, "%s gave %zu markers, %s %zu", b_name, b->n_markers,
                         a_name, a->n_markers);
    for (size_t m = 0; m < a->n_markers; m++)
        if (a->markers[m].index != b->markers[m].index ||
            strcmp(a->markers[m].label, b->markers[m].label))
            return check_set(r, CHECK_FAIL, "marker %zu: %s gave '%s' at %llu, %s '%s' at %llu",
                             m, b_name, b->markers[m].label,
                             (unsigned long long)b->markers[m].index, a_name,
                             a->markers[m].label, (unsigned long long)a->markers[m].index);
    if (a->n_values != b->n_values)
        return check_set(r, CHECK_FAIL, "%s gave %zu result values, %s %zu", b_name,
                         b->n_values, a_name, a->n_values);
    for (size_t i = 0; i < a->n_values; i++)
        if (memcmp(&a->values[i], &b->values[i], sizeof(double)))
            return check_set(r, CHECK_FAIL, "query %zu, value %zu: %s gave %.17g, %s %.17g",
                             i / (a->out_channels ? a->out_channels : 1),
                             i % (a->out_channels ? a->out_channels : 1), b_name, b->values[i],
                             a_name, a->values[i]);
    return 0;
}

static void check_chunking(void *ctx, check_result *r)
{
    run_ctx *x = ctx;
    static const uint32_t blocks[] = { 1, 7, 64 };
    uint32_t ref_block = REFERENCE_BLOCK;
    if (x->s.role == WEFT_ROLE_FILTER && x->s.in[0].max_frames < ref_block)
        ref_block = x->s.in[0].max_frames;
    vrun ref;
    if (open_and_run(&ref, &x->s, ref_block, r))
        return;
    for (unsigned i = 0; i < sizeof blocks / sizeof blocks[0]; i++) {
        vrun other;
        char a[32], b[32];
        if (blocks[i] > ref_block)
            continue;
        if (open_and_run(&other, &x->s, blocks[i], r))
            return;
        snprintf(a, sizeof a, "blocks of %u", ref_block);
        snprintf(b, sizeof b, "blocks of %u", blocks[i]);
        int differ = compare_runs(&ref, &other, a, b, r);
        vrun_close(&other);
        if (differ)
            return;
    }
    check_set(r, CHECK_PASS, "blocks of 1, 7 and 64 frames give the same %zu frames and %zu "
              "markers, bit for bit, as blocks of %u", ref.out_frames, ref.n_markers, ref_block);
    vrun_close(&ref);
}

static void check_determinism(void *ctx, check_result *r)
{
    run_ctx *x = ctx;
    vrun a, b;
    diag d = { 0 };
    if (vrun_open(&a, &x->s, 64, &d) || vrun_open(&b, &x->s, 64, &d)) {
        check_set(r, CHECK_FAIL, "two instances: %s", d.msg);
        return;
    }
    /* Side by side, call for call: a stage that keeps state in globals mixes the two up. */
    int ra = 1, rb = 1;
    while (ra > 0 || rb > 0) {
        if (ra > 0)
            ra = vrun_step(&a, &d);
        if (rb > 0 && ra >= 0)
            rb = vrun_step(&b, &d);
        if (ra < 0 || rb < 0) {
            check_set(r, CHECK_FAIL, "two instances: %s", d.msg);
            return;
        }
    }
    if (compare_runs(&a, &b, "the first instance", "the second", r) == 0)
        check_set(r, CHECK_PASS, "two instances called in turn give identical output (%zu "
                  "frames, %llu queries)", a.out_frames, (unsigned long long)a.n_queries);
    vrun_close(&a);
    vrun_close(&b);
}

static void check_no_alloc(void *ctx, check_result *r)
{
    run_ctx *x = ctx;
    /* Prove the watch sees an allocation before trusting a count of zero. */
    void *(*volatile alloc)(size_t) = malloc;
    alloc_counts before = alloc_watch_counts();
    alloc_watch_start();
    void *probe = alloc(16);
    alloc_watch_stop();
    free(probe);
    if (alloc_watch_counts().allocs == before.allocs) {
        check_set(r, CHECK_FAIL, "the allocation watch does not see malloc in this program");
        return;
    }
    vrun run;
    if (open_and_run(&run, &x->s, 7, r))
        return;
    const char *path = x->s.role == WEFT_ROLE_READOUT ? "process and query" : "process";
    if (run.in_calls.allocs)
        check_set(r, CHECK_FAIL, "%llu allocations (and %llu frees) in %llu calls of %s; "
                  "allocate in init", (unsigned long long)run.in_calls.allocs,
                  (unsigned long long)run.in_calls.frees, (unsigned long long)run.calls, path);
    else
        check_set(r, CHECK_PASS, "no allocation in %llu calls of %s",
                  (unsigned long long)run.calls, path);
    vrun_close(&run);
}

static void check_finite(void *ctx, check_result *r)
{
    run_ctx *x = ctx;
    vrun run;
    if (open_and_run(&run, &x->s, 64, r))
        return;
    size_t samples = run.out_frames * run.out_channels;
    for (size_t i = 0; i < samples; i++)
        if (!isfinite(run.out[i])) {
            check_set(r, CHECK_FAIL, "frame %zu, channel %zu is %g from finite input (noise, "
                      "spikes of 5000, a flat stretch)", i / run.out_channels,
                      i % run.out_channels, run.out[i]);
            vrun_close(&run);
            return;
        }
    for (size_t i = 0; i < run.n_values; i++)
        if (!isfinite(run.values[i])) {
            check_set(r, CHECK_FAIL, "query %zu, value %zu is %g from finite input",
                      i / run.out_channels, i % run.out_channels, run.values[i]);
            vrun_close(&run);
            return;
        }
    check_set(r, CHECK_PASS, "%zu samples and %zu result values, all finite", samples,
              run.n_values);
    vrun_close(&run);
}

static int check_probabilities(const vrun *run, double window, int any, check_result *r)
{
    uint32_t count = run->out_channels;
    for (size_t q = 0; count && q < run->n_values / count; q++) {
        const double *v = run->values + q * count;
        double sum = 0;
        for (uint32_t i = 0; i < count; i++) {
            if (!isfinite(v[i]) || (!any && (v[i] < 0 || v[i] > 1)))
                return check_set(r, CHECK_FAIL, "window %g s, query %zu: value %u is %.17g; "
                                 "class probabilities are in [0, 1]", window, q, i, v[i]);
            sum += v[i];
        }
        if (!any && fabs(sum - 1) > SUM_TOLERANCE)
            return check_set(r, CHECK_FAIL, "window %g s, query %zu: values sum to %.17g, not "
                             "1", window, q, sum);
    }
    return 0;
}

static void check_readout_values(void *ctx, check_result *r)
{
    run_ctx *x = ctx;
    static const double scale[] = { 0.5, 1, 2 };
    uint64_t queries = 0;
    double base = x->s.window;
    for (unsigned i = 0; i < 3; i++) {
        vrun run;
        x->s.window = base * scale[i];
        if (open_and_run(&run, &x->s, 64, r))
            return;
        queries += run.n_queries;
        int bad = check_probabilities(&run, x->s.window, x->c->opt.values_any, r);
        vrun_close(&run);
        if (bad)
            return;
    }
    if (queries == 0) {
        check_set(r, CHECK_FAIL, "no query ran");
        return;
    }
    check_set(r, CHECK_PASS, "%llu queries with windows of %g, %g and %g s: %s",
              (unsigned long long)queries, base / 2, base, base * 2,
              x->c->opt.values_any ? "values finite" : "in [0, 1], summing to 1");
}

static void check_destroy(void *ctx, check_result *r)
{
    run_ctx *x = ctx;
    vrun run;
    /* The first lifecycle warms caches that libraries keep for the process (an FFT planner,
     * stdio buffers); the second must give back everything it took. */
    if (open_and_run(&run, &x->s, 64, r))
        return;
    vrun_close(&run);
    alloc_watch_reset();
    alloc_watch_start();
    int failed = open_and_run(&run, &x->s, 64, r);
    vrun_close(&run);
    alloc_watch_stop();
    if (failed)
        return;
    if (!alloc_watch_available()) {
        int leaks = alloc_watch_leak_check();
        if (leaks < 0)
            check_set(r, CHECK_SKIP, "skipped (sanitizer build without LeakSanitizer)");
        else if (leaks > 0)
            check_set(r, CHECK_FAIL, "LeakSanitizer: memory taken during init, process or "
                      "fit was not freed by destroy (its report is on stderr)");
        else
            check_set(r, CHECK_PASS, "no leaks (LeakSanitizer) after init, stream, destroy");
        return;
    }
    alloc_counts n = alloc_watch_counts();
    if (n.allocs != n.frees)
        check_set(r, CHECK_FAIL, "not freed after destroy: %lld of %llu allocations (%llu "
                  "frees from open to close)", (long long)(n.allocs - n.frees),
                  (unsigned long long)n.allocs, (unsigned long long)n.frees);
    else
        check_set(r, CHECK_PASS, "destroy freed all %llu allocations of a second lifecycle",
                  (unsigned long long)n.allocs);
}

/* ---- the report --------------------------------------------------------------------------- */

static void print_cell(FILE *out, const char *text)
{
    for (const char *p = text; *p; p++) {
        if (*p == '|')
            fputc('\\', out);
        fputc(*p == '\n' ? ' ' : *p, out);
    }
}

static int print_report(const checker *c, FILE *out)
{
    static const char *const status_text[] = { "pass", "**FAIL**", "skip" };
    unsigned counts[3] = { 0, 0, 0 };
    char in[160] = "none";
    if (c->api)
        fprintf(out, "### weft stage check: %s %s (%s%s)\n\n", c->api->name ? c->api->name : "?",
                c->api->version ? c->api->version : "?", c->role ? role_text(c->role) : "?",
                c->api->roles & WEFT_ROLE_FITTABLE ? "+fittable" : "");
    else
        fprintf(out, "### weft stage check\n\n");
    if (c->role)
        describe_inputs(&c->setup, in, sizeof in);
    fprintf(out, "plugin: `%s`  \nhost: stage ABI %d.%d%s; inputs: %s; parameters: %s\n\n",
            c->file, WEFT_ABI_MAJOR, WEFT_ABI_MINOR,
            alloc_watch_available() ? "" : " (sanitizer build)", in,
            c->opt.params ? c->opt.params : c->chosen_params ? c->params_text : "defaults");
    fprintf(out, "| check | result | detail |\n|---|---|---|\n");
    for (int i = 0; i < R_COUNT; i++) {
        const check_result *r = &c->res[i];
        counts[r->status]++;
        fprintf(out, "| %s | %s | ", rule_names[i], status_text[r->status]);
        print_cell(out, r->detail);
        fprintf(out, " |\n");
    }
    fprintf(out, "\n%s: %u passed, %u failed, %u skipped\n", counts[CHECK_FAIL] ? "FAIL" : "PASS",
            counts[CHECK_PASS], counts[CHECK_FAIL], counts[CHECK_SKIP]);
    return (int)counts[CHECK_FAIL];
}

/* ---- the order of checks ------------------------------------------------------------------ */

static void run_child_check(checker *c, int rule, check_fn fn, int keep_stderr)
{
    run_ctx x = { c, c->setup };
    verify_in_child(fn, &x, c->timeout, keep_stderr, &c->res[rule]);
}

static void streaming_checks(checker *c)
{
    const char *why = c->role == WEFT_ROLE_SINK ? "a sink's output leaves the process"
                                                : "queried, not streamed";
    if (has_role(c, WEFT_ROLE_SOURCE | WEFT_ROLE_FILTER))
        run_child_check(c, R_CHUNKING, check_chunking, 0);
    else
        check_set(&c->res[R_CHUNKING], CHECK_SKIP, "%s", why);
    if (c->role != WEFT_ROLE_SINK)
        run_child_check(c, R_DETERMINISM, check_determinism, 0);
    else
        check_set(&c->res[R_DETERMINISM], CHECK_SKIP, "%s", why);
    if (!has_role(c, WEFT_ROLE_FILTER | WEFT_ROLE_READOUT))
        check_set(&c->res[R_NO_ALLOC], CHECK_SKIP, "not required of a %s", role_text(c->role));
    else if (!alloc_watch_available())
        check_set(&c->res[R_NO_ALLOC], CHECK_SKIP, "skipped (sanitizer build: the sanitizer "
                  "owns malloc)");
    else
        run_child_check(c, R_NO_ALLOC, check_no_alloc, 0);
    if (c->role != WEFT_ROLE_SINK)
        run_child_check(c, R_FINITE, check_finite, 0);
    else
        check_set(&c->res[R_FINITE], CHECK_SKIP, "%s", why);
    if (c->role == WEFT_ROLE_READOUT)
        run_child_check(c, R_READOUT_VALUES, check_readout_values, 0);
    else
        check_set(&c->res[R_READOUT_VALUES], CHECK_SKIP, "not a readout");
    run_child_check(c, R_DESTROY, check_destroy, !alloc_watch_available());
}

/* Variations of the parameters start from the ones now in use. */
static void reresolve(checker *c)
{
    ydoc doc;
    diag d = { 0 };
    param_set ps;
    if (ydoc_load(&doc, "params", c->params_text, &d) == 0 &&
        param_set_resolve(&ps, c->api->params, doc.root, &doc, c->api->name, &d) == 0) {
        param_set_free(&c->resolved);
        c->resolved = ps;
    }
    ydoc_free(&doc);
}

static int try_init(checker *c, verify_setup *s, check_result *r)
{
    run_ctx x = { c, *s };
    x.s.fit = 0;
    verify_in_child(check_init, &x, c->timeout, 0, r);
    return r->status == CHECK_PASS ? 0 : -1;
}

/* Some stages cannot start from their defaults on 4 channels (six channels for three CSP
 * pairs, a weight matrix to give): try more channels, then -- unless the user chose the
 * parameters -- each single-parameter variation, and say which configuration was used. */
static void find_working_setup(checker *c)
{
    static const uint32_t more_channels[] = { 8, 16 };
    check_result first, r;
    if (!try_init(c, &c->setup, &first)) {
        c->res[R_INIT] = first;
        return;
    }
    int ladder = !c->opt.n_in && c->role != WEFT_ROLE_SOURCE &&
                 c->setup.in[0].kind == WEFT_STREAM_SAMPLES;
    attempt *list = calloc(MAX_ATTEMPTS, sizeof *list);
    unsigned n = 0;
    for (const weft_param_spec *s = c->api->params; list && !c->opt.params && s && s->name; s++)
        if (!(s->flags & WEFT_PARAM_LEARNED))
            n = param_attempts(c, s, list, n);
    /* More channels with the defaults first, then one parameter changed at a time. */
    for (unsigned i = 0; i <= n; i++) {
        for (unsigned layout = 0; layout <= (ladder ? 2u : 0u); layout++) {
            if (layout == 0 && i == 0)
                continue; /* that was the first try */
            verify_setup base = c->setup;
            if (layout)
                for (uint32_t k = 0; k < base.n_in; k++)
                    base.in[k].channels = more_channels[layout - 1];
            verify_setup s = base;
            if (i > 0)
                s.params = list[i - 1].params;
            if (try_init(c, &s, &r))
                continue;
            char text[CHECK_DETAIL_MAX];
            snprintf(text, sizeof text, "%.300s, with %.100s: the defaults on the default "
                     "layout were refused", r.detail, i ? list[i - 1].what : "the defaults");
            check_set(&c->res[R_INIT], CHECK_PASS, "%s", text);
            c->setup = s;
            if (i > 0) {
                snprintf(c->params_text, sizeof c->params_text, "%s", list[i - 1].params);
                c->setup.params = c->params_text;
                c->chosen_params = 1;
                reresolve(c);
            }
            free(list);
            return;
        }
    }
    free(list);
    check_set(&c->res[R_INIT], CHECK_FAIL, "%s (also tried: %s; give --params and --inputs "
              "that it accepts)", first.detail,
              ladder ? "8 and 16 channels, and one parameter changed at a time"
                     : "one parameter changed at a time");
}

/* Returns -1 only when the checker cannot run (bad --params); failed checks are results. */
static int run_checks(checker *c)
{
    verify_in_child(check_load, (void *)c->file, c->timeout, 0, &c->res[R_LOAD]);
    if (c->res[R_LOAD].status == CHECK_FAIL || open_in_parent(c)) {
        skip_rest(c, R_ABI, "not loaded");
        return 0;
    }
    if (check_abi(c) || check_descriptor(c)) {
        skip_rest(c, R_DESCRIPTOR, "the descriptor is not usable");
        return 0;
    }
    default_inputs(c, &c->setup);
    c->setup.file = c->file;
    c->setup.api = c->api;
    c->setup.role = c->role;
    c->setup.window = c->opt.window > 0 ? c->opt.window : 1.0;
    c->setup.seconds = fmax(4.0, 2 * c->setup.window + 1);
    c->setup.fit = 1;
    if (check_params(c))
        return -1;
    if (c->res[R_PARAMS].status == CHECK_FAIL) {
        skip_rest(c, R_INIT, "parameter declarations are not valid");
        return 0;
    }
    if (c->missing[0]) {
        char why[CHECK_DETAIL_MAX];
        snprintf(why, sizeof why, "%.400s; give it with --params '{ NAME: VALUE }'",
                 c->missing);
        skip_rest(c, R_INIT, why);
        return 0;
    }
    c->setup.params = c->params_text;
    find_working_setup(c);
    if (c->res[R_INIT].status == CHECK_FAIL) {
        skip_rest(c, R_FIT, "init failed");
        return 0;
    }
    if (c->api->roles & WEFT_ROLE_FITTABLE) {
        run_child_check(c, R_FIT, check_fit, 0);
        if (c->res[R_FIT].status == CHECK_FAIL)
            c->setup.fit = 0;
    } else {
        check_set(&c->res[R_FIT], CHECK_SKIP, "not fittable");
    }
    check_bad_params(c);
    if (c->role != WEFT_ROLE_SOURCE)
        check_bad_layouts(c);
    else
        check_set(&c->res[R_BAD_LAYOUTS], CHECK_SKIP, "a source has no input");
    streaming_checks(c);
    return 0;
}

int verify_plugin(const char *file, const verify_options *opt, FILE *out)
{
    checker *c = calloc(1, sizeof *c);
    if (!c || make_labels(c, 4096)) {
        fprintf(stderr, "weft: out of memory\n");
        free(c);
        return -1;
    }
    c->file = file;
    c->opt = *opt;
    c->timeout = opt->timeout ? opt->timeout : 30;
    /* A thread pool started in the checker would not survive fork() into the checks. */
    setenv("OPENBLAS_NUM_THREADS", "1", 0);
    setenv("OMP_NUM_THREADS", "1", 0);
    int failed = run_checks(c) ? -1 : print_report(c, out);
    param_set_free(&c->resolved);
    free(c->label_block);
    free(c->labels);
    free(c);
    return failed;
}

int verify_parse_inputs(const char *text, verify_options *opt, diag *d)
{
    opt->n_in = 0;
    const char *p = text;
    while (*p) {
        char *end;
        unsigned long channels = strtoul(p, &end, 10);
        if (end == p || *end != '@' || channels == 0 || channels > 4096)
            return diag_set(d, "--inputs '%s': write CHANNELS@RATE[,CHANNELS@RATE...], e.g. "
                               "4@250 or 8@250,2@1000 (1 to 4096 channels)", text);
        p = end + 1;
        double rate = strtod(p, &end);
        if (end == p || !(rate > 0) || !isfinite(rate) || (*end && *end != ','))
            return diag_set(d, "--inputs '%s': the rate after '@' must be a positive number of "
                               "Hz", text);
        if (opt->n_in == VERIFY_MAX_INPUTS)
            return diag_set(d, "--inputs '%s': at most %d inputs", text, VERIFY_MAX_INPUTS);
        opt->in[opt->n_in++] = (weft_layout){ .name = "input", .kind = WEFT_STREAM_SAMPLES,
                                              .channels = (uint32_t)channels, .rate = rate,
                                              .max_frames = DEFAULT_MAX_FRAMES };
        p = *end ? end + 1 : end;
    }
    if (opt->n_in == 0)
        return diag_set(d, "--inputs is empty; e.g. 4@250");
    return 0;
}
