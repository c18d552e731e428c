/* report_json: the replay's metrics and predictions as JSON (RFC 8259); NaN is written as
 * null, since JSON has no NaN. */
#include <math.h>
#include <stdio.h>

#include "report.h"
#include "json_write.h"

static void json_number(FILE *f, double v)
{
    if (isfinite(v))
        fprintf(f, "%.17g", v);
    else
        fputs("null", f);
}

static void json_metrics(FILE *f, const metrics *m, int with_itr, double seconds)
{
    fprintf(f, "{\"n\": %zu, \"accuracy\": ", m->n);
    json_number(f, m->accuracy);
    fputs(", \"balanced_accuracy\": ", f);
    json_number(f, m->balanced_accuracy);
    fputs(", \"auc\": ", f);
    json_number(f, m->auc);
    fputs(", \"confusion\": [", f);
    for (unsigned t = 0; m->confusion && t < m->n_classes; t++) {
        fputs(t ? ", [" : "[", f);
        for (unsigned p = 0; p < m->n_classes; p++)
            fprintf(f, "%s%u", p ? ", " : "", m->confusion[t * m->n_classes + p]);
        fputc(']', f);
    }
    fputc(']', f);
    if (with_itr) {
        fputs(", \"itr_bits_per_trial\": ", f);
        json_number(f, m->n ? m->itr_bits : NAN);
        fputs(", \"itr_bits_per_minute\": ", f);
        json_number(f, m->itr_bits_per_minute);
        fputs(", \"seconds_per_trial\": ", f);
        json_number(f, seconds);
    }
    fputc('}', f);
}

static void json_readout(FILE *f, const replay *r, const replay_readout *ro)
{
    fputs("{\"stage\": ", f);
    json_write_string(f, ro->name);
    fputs(", \"classes\": [", f);
    for (unsigned k = 0; k < ro->n_classes; k++) {
        fputs(k ? ", " : "", f);
        json_write_string(f, ro->class_names[k]);
    }
    fputs("], \"score_from\": ", f);
    json_number(f, ro->score_from);
    fputs(", \"score_to\": ", f);
    json_number(f, ro->score_to >= 0 ? ro->score_to : NAN);
    fprintf(f, ", \"results\": %zu,\n   \"per_result\": ", ro->n_results);
    json_metrics(f, &ro->per_result, 0, NAN);
    fputs(",\n   \"per_trial\": ", f);
    json_metrics(f, &ro->per_trial, 1, ro->seconds_per_trial);
    /* Every scored prediction, so outside tools can recompute the figures. */
    fputs(",\n   \"scored_results\": [", f);
    int first = 1;
    for (size_t i = 0; i < ro->n_results; i++) {
        const replay_result *res = &ro->results[i];
        if (res->cue < 0)
            continue;
        const double *v = ro->values + i * ro->n_classes;
        unsigned best = 0;
        for (unsigned k = 1; k < ro->n_classes; k++)
            if (v[k] > v[best])
                best = k;
        fprintf(f, "%s\n    {\"time\": ", first ? "" : ",");
        json_number(f, res->time);
        fprintf(f, ", \"index\": %llu, \"truth\": %d, \"predicted\": %u, \"values\": [",
                (unsigned long long)res->index, replay_cue_class(r, ro, r->cues[res->cue].label),
                best);
        for (unsigned k = 0; k < ro->n_classes; k++) {
            fputs(k ? ", " : "", f);
            json_number(f, v[k]);
        }
        fputs("]}", f);
        first = 0;
    }
    fputs("],\n   \"trials\": [", f);
    for (size_t i = 0; i < ro->n_trials; i++) {
        const replay_trial *t = &ro->trials[i];
        fprintf(f, "%s\n    {\"time\": ", i ? "," : "");
        json_number(f, r->cues[t->cue].time);
        fputs(", \"label\": ", f);
        json_write_string(f, r->cues[t->cue].label);
        fprintf(f, ", \"truth\": %u, \"predicted\": %u, \"results\": %u, \"score\": ",
                t->truth, t->predicted, t->results);
        json_number(f, t->score);
        fputc('}', f);
    }
    fputs("]}", f);
}

int report_json(FILE *f, const replay *r, const char *graph_path)
{
    const latency *l = &r->stats.round_us;
    fputs("{\"graph\": ", f);
    json_write_string(f, graph_path);
    fputs(", \"recording\": ", f);
    json_write_string(f, r->opt.data);
    fputs(", \"recording_seconds\": ", f);
    json_number(f, r->recording_seconds);
    fputs(", \"stream_seconds\": ", f);
    json_number(f, r->stats.stream_seconds);
    fprintf(f, ", \"markers\": %zu,\n \"latency_us\": {\"rounds\": %llu, \"p50\": ", r->n_cues,
            (unsigned long long)l->n);
    json_number(f, latency_quantile(l, 0.5));
    fputs(", \"p90\": ", f);
    json_number(f, latency_quantile(l, 0.9));
    fputs(", \"p99\": ", f);
    json_number(f, latency_quantile(l, 0.99));
    fputs(", \"max\": ", f);
    json_number(f, l->max_us);
    fputs("},\n \"folds\": [", f);
    for (unsigned k = 1; k < r->folds; k++) {
        const replay_fold *fo = &r->fold[k];
        fprintf(f, "%s{\"fitted_on\": [0, ", k > 1 ? ", " : "");
        json_number(f, fo->from);
        fputs("], \"tested_on\": [", f);
        json_number(f, fo->from);
        fputs(", ", f);
        json_number(f, isfinite(fo->to) ? fo->to : r->stats.stream_seconds);
        fprintf(f, "], \"tested\": %s, \"skipped\": ", fo->tested ? "true" : "false");
        if (fo->tested)
            fputs("null", f);
        else
            json_write_string(f, fo->skipped);
        fputc('}', f);
    }
    fputs("],\n \"readouts\": [", f);
    for (unsigned i = 0; i < r->n_readouts; i++) {
        fputs(i ? ",\n  " : "\n  ", f);
        json_readout(f, r, &r->readouts[i]);
    }
    fputs("]}\n", f);
    return ferror(f) ? -1 : 0;
}
