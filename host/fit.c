/* fit: the order of fitting (graph order, each stage on the epochs of the readout it feeds),
 * the final fit on every trial and the chronological cross-validation. */
#include "fit.h"

#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "fit_epochs.h"
#include "fit_pass.h"
#include "fnv1a.h"
#include "learned_sink.h"

#define NONE UINT32_MAX
#define CV_MIN_TRIALS 2         /* per class in a fold's training part */
#define FIT_MAX_CLASSES 64

typedef struct fit_run {
    pipeline *pl;
    const fit_options *opt;
    fit_summary *sum;
    uint8_t *anc;               /* anc[i * n + j]: j feeds i */
    fit_pass pass;
    uint32_t *governor;         /* per node: the readout whose epochs it learns from, or NONE */
    epoch_list *lists;          /* per node; used for readouts with `fit:` */
    unsigned last_target;       /* whose inputs the last pass recorded */
    double shortest_source;     /* seconds */
} fit_run;

static void say(const fit_run *fr, const char *fmt, ...) DIAG_PRINTF(2, 3);
static void say(const fit_run *fr, const char *fmt, ...)
{
    if (!fr->opt->log)
        return;
    va_list ap;
    va_start(ap, fmt);
    fputs("weft fit: ", fr->opt->log);
    vfprintf(fr->opt->log, fmt, ap);
    fputc('\n', fr->opt->log);
    va_end(ap);
}

static int feeds(const fit_run *fr, unsigned from, unsigned to)
{
    return fr->anc[(size_t)to * fr->pl->n + from] != 0;
}

static int is_fitted(const node *n)
{
    for (uint32_t i = 0; i < n->params.count; i++)
        if ((n->api->params[i].flags & WEFT_PARAM_LEARNED) && !n->params.items[i].given)
            return 0;
    return 1;
}

static int fittable(const node *n) { return (n->api->roles & WEFT_ROLE_FITTABLE) != 0; }

/* A fittable readout learns from its own `fit:` epochs; a fittable filter from those of the
 * first readout after it (in graph order) that has `fit:`. */
static int assign_governors(fit_run *fr, diag *d)
{
    pipeline *pl = fr->pl;
    for (unsigned k = 0; k < pl->n; k++) {
        node *n = &pl->nodes[pl->order[k]];
        fr->governor[n->index] = NONE;
        if (!fittable(n))
            continue;
        if (n->role == WEFT_ROLE_READOUT && n->def->has_fit) {
            fr->governor[n->index] = n->index;
        } else if (n->role != WEFT_ROLE_READOUT) {
            for (unsigned j = k + 1; j < pl->n; j++) {
                const node *r = &pl->nodes[pl->order[j]];
                if (r->role == WEFT_ROLE_READOUT && r->def->has_fit && feeds(fr, n->index, r->index)) {
                    fr->governor[n->index] = r->index;
                    break;
                }
            }
        }
        if (fr->governor[n->index] != NONE)
            continue;
        if (!is_fitted(n))
            return diag_at(d, pl->g->path, n->def->mark,
                           n->role == WEFT_ROLE_READOUT
                               ? "stage '%s' is fittable but has no `fit:`; add e.g. `fit: { "
                                 "classes: { rest: [rest], grip: [grip] }, after: 1.5 }`"
                               : "stage '%s' is fittable but no readout after it has `fit:` "
                                 "to say which epochs it learns from",
                           n->def->name);
        say(fr, "stage '%s' keeps its fitted values (nothing says how to cut its epochs)",
            n->def->name);
    }
    return 0;
}

static int check_bounded(const fit_run *fr, diag *d)
{
    if (fr->opt->duration > 0)
        return 0;
    for (unsigned i = 0; i < fr->pl->n; i++) {
        const node *n = &fr->pl->nodes[i];
        if (n->role == WEFT_ROLE_SOURCE && !n->out.bounded)
            return diag_at(d, fr->pl->g->path, n->def->mark,
                           "stage '%s' streams without end; fitting needs a bounded run: a "
                           "recording, `trials: N` on a synthetic source, or --duration SECONDS",
                           n->def->name);
    }
    return 0;
}

/* The sources alone: markers, the length of the data and its hash. */
static int survey(fit_run *fr, diag *d)
{
    pipeline *pl = fr->pl;
    if (fit_pass_run(&fr->pass, NONE, d))
        return -1;
    fr->sum->passes++;
    uint64_t h = FNV1A_OFFSET;
    fr->shortest_source = INFINITY;
    for (unsigned i = 0; i < pl->n; i++) {
        const node *n = &pl->nodes[i];
        if (n->role != WEFT_ROLE_SOURCE)
            continue;
        double seconds = (double)n->produced / n->out.rate;
        if (seconds > fr->sum->data_seconds)
            fr->sum->data_seconds = seconds;
        if (seconds < fr->shortest_source)
            fr->shortest_source = seconds;
        h = fnv1a_update(h, &fr->pass.hash[i], sizeof fr->pass.hash[i]);
        h = fnv1a_update(h, &fr->pass.marker_hash[i], sizeof fr->pass.marker_hash[i]);
    }
    fr->sum->data_hash = h;
    fr->sum->n_markers = fr->pass.n_markers;
    fr->last_target = NONE;
    return 0;
}

static void warn_unmapped(const fit_run *fr)
{
    const fit_pass *fp = &fr->pass;
    for (unsigned m = 0; m < fp->n_markers; m++) {
        const char *label = fp->markers[m].label;
        int mapped = 0, seen = 0, count = 0;
        for (unsigned i = 0; i < fr->pl->n && !mapped; i++)
            if (fr->pl->nodes[i].role == WEFT_ROLE_READOUT && fr->pl->nodes[i].def->has_fit)
                mapped = epoch_label_mapped(&fr->pl->nodes[i], label);
        for (unsigned p = 0; p < m && !seen; p++)
            seen = !strcmp(fp->markers[p].label, label);
        if (mapped || seen)
            continue;
        for (unsigned p = m; p < fp->n_markers; p++)
            count += !strcmp(fp->markers[p].label, label);
        say(fr, "warning: %d marker%s '%s' in the data belong%s to no class of `fit: classes`; "
            "ignored", count, count == 1 ? "" : "s", label, count == 1 ? "s" : "");
    }
}

static int check_trials(const fit_run *fr, const node *r, const epoch_list *el, diag *d)
{
    const graph_fit *f = &r->def->fit;
    for (unsigned c = 0; c < f->n_classes; c++) {
        if (el->per_class[c] >= FIT_MIN_TRIALS)
            continue;
        char labels[256] = "";
        size_t len = 0;
        for (unsigned l = 0; l < f->classes[c].n_labels && len < sizeof labels; l++)
            len += (size_t)snprintf(labels + len, sizeof labels - len, "%s'%s'", l ? ", " : "",
                                    f->classes[c].labels[l]);
        return diag_at(d, fr->pl->g->path, f->classes[c].mark,
                       "stage '%s': class '%s' has %u trial%s (markers %s) in %.1f s of data"
                       "%s; fitting needs at least %d per class -- record more trials or "
                       "check the marker labels", r->def->name, f->classes[c].name,
                       el->per_class[c], el->per_class[c] == 1 ? "" : "s", labels,
                       fr->sum->data_seconds,
                       el->dropped ? " (some markers were too close to the data's edges)" : "",
                       FIT_MIN_TRIALS);
    }
    return 0;
}

static int build_lists(fit_run *fr, diag *d)
{
    pipeline *pl = fr->pl;
    for (unsigned k = 0; k < pl->n; k++) {
        const node *r = &pl->nodes[pl->order[k]];
        if (r->role != WEFT_ROLE_READOUT || !r->def->has_fit)
            continue;
        epoch_list *el = &fr->lists[r->index];
        if (r->def->fit.n_classes > FIT_MAX_CLASSES)
            return diag_at(d, pl->g->path, r->def->fit.mark,
                           "stage '%s': %u fit classes; at most %d", r->def->name,
                           r->def->fit.n_classes, FIT_MAX_CLASSES);
        if (epoch_list_build(el, r, fr->pass.markers, fr->pass.n_markers, fr->shortest_source,
                             d))
            return -1;
        if (el->dropped)
            say(fr, "stage '%s': %u labelled marker%s left out: %s windows would start before "
                "the data or end after it", r->def->name, el->dropped,
                el->dropped == 1 ? "" : "s", el->dropped == 1 ? "its" : "their");
    }
    warn_unmapped(fr);
    for (unsigned i = 0; i < pl->n; i++)
        if (fr->lists[i].per_class && check_trials(fr, &pl->nodes[i], &fr->lists[i], d))
            return -1;
    return 0;
}

/* The window length of each input of `target` for the epochs of `readout`: the readout's own
 * windows, or for a stage before it the window of the readout input it feeds. */
static int window_frames(const fit_run *fr, const node *target, const node *readout,
                         uint32_t *frames, diag *d)
{
    if (target == readout) {
        memcpy(frames, readout->win_frames, readout->n_in * sizeof *frames);
        return 0;
    }
    for (unsigned j = 0; j < readout->n_in; j++) {
        unsigned up = readout->in_node[j];
        if (up != target->index && !feeds(fr, target->index, up))
            continue;
        for (unsigned k = 0; k < target->n_in; k++) {
            double f = round(readout->def->inputs[j].window * target->in_layouts[k].rate);
            frames[k] = f < 1 ? 1 : (uint32_t)f;
        }
        return 0;
    }
    return diag_set(d, "internal: stage '%s' does not feed readout '%s'", target->def->name,
                    readout->def->name);
}

static int record_for(fit_run *fr, unsigned target, diag *d)
{
    if (fr->last_target == target)
        return 0;
    fr->last_target = NONE;
    if (fit_pass_run(&fr->pass, target, d))
        return -1;
    fr->sum->passes++;
    fr->last_target = target;
    return 0;
}

/* One replay, then the stage's fit on the selected epochs of `readout`, then re-init. */
static int fit_stage(fit_run *fr, unsigned target, unsigned readout, const uint8_t *select,
                     diag *d)
{
    pipeline *pl = fr->pl;
    node *t = &pl->nodes[target];
    const node *r = &pl->nodes[readout];
    uint32_t *frames = calloc(t->n_in + 1, sizeof *frames);
    if (!frames)
        return diag_set(d, "out of memory");
    epoch_cut cut;
    int rc = window_frames(fr, t, r, frames, d) || record_for(fr, target, d) ||
                     epoch_cut_make(&cut, &fr->lists[readout], select, t, frames,
                                    fr->pass.rec, d)
                 ? -1
                 : 0;
    free(frames);
    if (rc)
        return -1;
    learned_sink ls;
    learned_sink_bind(&ls, &t->params);
    if (t->api->fit(t->self, &cut.ep, &ls.sink) < 0)
        rc = node_fail(t, d, "failed to fit");
    else if (ls.bad_name[0])
        rc = diag_set(d, "stage '%s': its fit wrote '%s', which it does not declare as a "
                         "parameter of that type (a bug in plugin '%s')", t->def->name,
                      ls.bad_name, t->api->name);
    epoch_cut_free(&cut);
    if (rc == 0)
        rc = pipeline_reinit(pl, target, d);
    /* What the last pass recorded was seen through the old values of this stage. */
    if (fr->last_target != NONE && feeds(fr, target, fr->last_target))
        fr->last_target = NONE;
    return rc;
}

static unsigned argmax(const double *v, unsigned n)
{
    unsigned best = 0;
    for (unsigned i = 1; i < n; i++)
        if (v[i] > v[best])
            best = i;
    return best;
}

/* Query the readout on the selected epochs, as the loop would at their markers. */
static int evaluate(fit_run *fr, unsigned readout, const uint8_t *select, unsigned *tested,
                    unsigned *correct, diag *d)
{
    node *r = &fr->pl->nodes[readout];
    const graph_fit *f = &r->def->fit;
    int label_of[FIT_MAX_CLASSES];
    for (unsigned c = 0; c < f->n_classes && c < FIT_MAX_CLASSES; c++) {
        label_of[c] = -1;
        for (uint32_t v = 0; r->out.labels && v < r->out.channels; v++)
            if (!strcmp(r->out.labels[v], f->classes[c].name))
                label_of[c] = (int)v;
        if (label_of[c] < 0) {
            say(fr, "stage '%s': its outputs are not named after the fit classes; no accuracy "
                "estimate", r->def->name);
            return 1;
        }
    }
    epoch_cut cut;
    if (record_for(fr, readout, d) ||
        epoch_cut_make(&cut, &fr->lists[readout], select, r, r->win_frames, fr->pass.rec, d))
        return -1;
    for (uint32_t e = 0; e < cut.ep.n_epochs; e++) {
        weft_result res = { .values = r->values, .count = r->out.channels };
        memset(r->values, 0, r->out.channels * sizeof *r->values);
        if (r->api->query(r->self, cut.windows + (size_t)e * r->n_in, r->n_in, &res) < 0) {
            epoch_cut_free(&cut);
            return node_fail(r, d, "failed in a test query");
        }
        (*tested)++;
        *correct += (int)argmax(r->values, r->out.channels) == label_of[cut.classes[e]];
    }
    epoch_cut_free(&cut);
    return 0;
}

/* Fit `readout` and the fittable stages before it on `train`, all on its epochs. */
static int fit_chain(fit_run *fr, unsigned readout, const uint8_t *train, diag *d)
{
    pipeline *pl = fr->pl;
    for (unsigned k = 0; k < pl->n; k++) {
        unsigned i = pl->order[k];
        if (fr->governor[i] == NONE || (i != readout && !feeds(fr, i, readout)))
            continue;
        if (fit_stage(fr, i, readout, train, d))
            return -1;
    }
    return 0;
}

static int enough_in_training(const epoch_list *el, const uint8_t *train)
{
    unsigned count[FIT_MAX_CLASSES] = { 0 };
    for (unsigned e = 0; e < el->n; e++)
        if (train[e] && el->items[e].cls < FIT_MAX_CLASSES)
            count[el->items[e].cls]++;
    for (unsigned c = 0; c < el->n_classes && c < FIT_MAX_CLASSES; c++)
        if (count[c] < CV_MIN_TRIALS)
            return 0;
    return 1;
}

/* Chronological K-fold: the trials are cut into K consecutive blocks; block f is tested after
 * fitting on blocks 0 .. f-1 only, so no fold learns from later data (forward chaining, as
 * for any time-ordered data; common practice). */
static int cross_validate(fit_run *fr, fit_readout_summary *rs, diag *d)
{
    unsigned folds = fr->opt->folds ? fr->opt->folds : FIT_DEFAULT_FOLDS;
    const epoch_list *el = &fr->lists[rs->stage];
    if (folds < 2 || el->n < folds)
        return 0;
    uint8_t *train = calloc(el->n, 1), *test = calloc(el->n, 1);
    rs->fold_accuracy = calloc(folds, sizeof *rs->fold_accuracy);
    if (!train || !test || !rs->fold_accuracy) {
        free(train);
        free(test);
        return diag_set(d, "out of memory");
    }
    int rc = 0;
    for (unsigned f = 1; f < folds && rc == 0; f++) {
        for (unsigned e = 0; e < el->n; e++) {
            unsigned block = (unsigned)((uint64_t)e * folds / el->n);
            train[e] = block < f;
            test[e] = block == f;
        }
        if (!enough_in_training(el, train)) {
            say(fr, "stage '%s': fold %u left out: fewer than %d trials of a class before it",
                fr->pl->nodes[rs->stage].def->name, f, CV_MIN_TRIALS);
            continue;
        }
        diag inner = { 0 };
        unsigned tested = 0, correct = 0;
        int frc = fit_chain(fr, rs->stage, train, &inner);
        if (frc == 0)
            frc = evaluate(fr, rs->stage, test, &tested, &correct, &inner);
        if (frc > 0)
            break;
        if (frc < 0) {
            say(fr, "fold %u left out: %s", f, inner.msg);
            continue;
        }
        rs->fold_accuracy[rs->cv_folds++] = tested ? (double)correct / tested : 0;
        rs->cv_tested += tested;
        rs->cv_correct += correct;
    }
    free(train);
    free(test);
    return rc;
}

static int summarise_readouts(fit_run *fr, diag *d)
{
    pipeline *pl = fr->pl;
    fit_summary *s = fr->sum;
    s->readouts = calloc(pl->n, sizeof *s->readouts);
    if (!s->readouts)
        return diag_set(d, "out of memory");
    for (unsigned k = 0; k < pl->n; k++) {
        const node *r = &pl->nodes[pl->order[k]];
        if (r->role != WEFT_ROLE_READOUT || !r->def->has_fit)
            continue;
        const epoch_list *el = &fr->lists[r->index];
        fit_readout_summary *rs = &s->readouts[s->n_readouts++];
        rs->stage = r->index;
        rs->n_classes = el->n_classes;
        rs->n_epochs = el->n;
        rs->dropped = el->dropped;
        rs->trials = calloc(el->n_classes, sizeof *rs->trials);
        if (!rs->trials)
            return diag_set(d, "out of memory");
        memcpy(rs->trials, el->per_class, el->n_classes * sizeof *rs->trials);
    }
    return 0;
}

static int fit_everything(fit_run *fr, diag *d)
{
    pipeline *pl = fr->pl;
    for (unsigned k = 0; k < pl->n; k++) {
        unsigned i = pl->order[k];
        if (fr->governor[i] == NONE)
            continue;
        const epoch_list *el = &fr->lists[fr->governor[i]];
        say(fr, "fitting '%s' (%s) on %u epochs of '%s'", pl->nodes[i].def->name,
            pl->nodes[i].api->name, el->n, pl->nodes[fr->governor[i]].def->name);
        if (fit_stage(fr, i, fr->governor[i], NULL, d))
            return -1;
        fr->sum->n_fitted++;
    }
    return 0;
}

/* splitmix64 (Steele, Lea and Flood 2014, "Fast splittable pseudorandom number generators"). */
static uint64_t splitmix64(uint64_t *state)
{
    uint64_t z = (*state += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

/* A permutation check: with the classes shuffled over the trials (Fisher-Yates), nothing
 * real can be learned, so the cross-validated accuracy must fall to chance. */
static void shuffle_classes(fit_run *fr)
{
    uint64_t state = fr->opt->shuffle_seed;
    for (unsigned i = 0; i < fr->pl->n; i++) {
        epoch_list *el = &fr->lists[i];
        for (unsigned e = el->n; e > 1; e--) {
            unsigned j = (unsigned)(splitmix64(&state) % e);
            uint32_t c = el->items[e - 1].cls;
            el->items[e - 1].cls = el->items[j].cls;
            el->items[j].cls = c;
        }
    }
    say(fr, "warning: the classes are shuffled over the trials (--shuffle); the fitted graph "
        "only shows the chance level");
}

static int run_fit(fit_run *fr, diag *d)
{
    if (assign_governors(fr, d) || check_bounded(fr, d) || survey(fr, d) || build_lists(fr, d) ||
        summarise_readouts(fr, d))
        return -1;
    if (fr->opt->shuffle)
        shuffle_classes(fr);
    for (unsigned i = 0; i < fr->sum->n_readouts; i++)
        if (cross_validate(fr, &fr->sum->readouts[i], d))
            return -1;
    /* Last, so the values left in the stages are the ones learned from every trial. */
    return fit_everything(fr, d);
}

int fit_pipeline(pipeline *pl, const fit_options *opt, fit_summary *sum, diag *d)
{
    memset(sum, 0, sizeof *sum);
    fit_run fr = { .pl = pl, .opt = opt, .sum = sum, .last_target = NONE };
    fr.anc = fit_ancestors(pl);
    fr.governor = calloc(pl->n, sizeof *fr.governor);
    fr.lists = calloc(pl->n, sizeof *fr.lists);
    int rc;
    if (!fr.anc || !fr.governor || !fr.lists ||
        fit_pass_init(&fr.pass, pl, fr.anc, opt->duration))
        rc = diag_set(d, "out of memory");
    else
        rc = run_fit(&fr, d);
    for (unsigned i = 0; fr.lists && i < pl->n; i++)
        epoch_list_free(&fr.lists[i]);
    if (fr.pass.pl)
        fit_pass_free(&fr.pass);
    free(fr.lists);
    free(fr.governor);
    free(fr.anc);
    return rc;
}

void fit_summary_free(fit_summary *sum)
{
    for (unsigned i = 0; sum->readouts && i < sum->n_readouts; i++) {
        free(sum->readouts[i].trials);
        free(sum->readouts[i].fold_accuracy);
    }
    free(sum->readouts);
    memset(sum, 0, sizeof *sum);
}
