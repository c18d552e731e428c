/* graph_use_recording: every source of a loaded graph becomes the edf reader on the stream of
 * its own name, only the first plays the markers, recorders leave, and the YAML tree says so. */
#include <criterion/criterion.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "graph_recording.h"

static const char text[] =
    "weft: 1\n"
    "stages:\n"
    "  eeg: { plugin: synthetic, params: { channels: 8, seed: 3 } }\n"
    "  emg: { path: ./my_amp.so }\n"
    "  f: { plugin: bandpass, input: eeg }\n"
    "  rec: { plugin: recorder, input: [eeg, emg], params: { path: x.bdf } }\n"
    "  out: { plugin: jsonl, input: f }\n";

static const char *param(const graph_stage *s, const char *key)
{
    const ynode *v = ynode_get(s->params, key);
    return v ? v->text : NULL;
}

Test(records_graph_recording, sources_play_their_stream_of_the_recording)
{
    const char *file = "/tmp/weft-graph-recording.bdf";
    FILE *f = fopen(file, "w");
    fclose(f);
    graph g;
    diag d = { 0 };
    cr_assert_eq(graph_load(&g, "t.yaml", text, &d), 0, "%s", d.msg);
    cr_assert_eq(graph_use_recording(&g, file, &d), 0, "%s", d.msg);
    cr_assert_eq(g.n_stages, 4, "the recorder is gone");
    cr_expect_eq(graph_find(&g, "rec"), -1);
    const graph_stage *eeg = &g.stages[graph_find(&g, "eeg")];
    const graph_stage *emg = &g.stages[graph_find(&g, "emg")];
    cr_expect_str_eq(eeg->plugin, "edf");
    cr_expect_str_eq(emg->plugin, "edf");
    cr_expect_null(emg->path);
    cr_expect_str_eq(param(eeg, "path"), file);
    cr_expect_str_eq(param(eeg, "stream"), "eeg");
    cr_expect_str_eq(param(emg, "stream"), "emg");
    cr_expect_str_eq(param(eeg, "markers"), "true");
    cr_expect_str_eq(param(emg, "markers"), "false");
    cr_expect_null(param(eeg, "channels"), "the live source's parameters are replaced");
    cr_expect_eq(eeg->params_mark.line, 3, "errors still point at the stage's line");
    const ynode *stage = ynode_get(ynode_get(g.doc.root, "stages"), "emg");
    cr_expect_str_eq(ynode_get(stage, "plugin")->text, "edf");
    cr_expect_str_eq(g.stages[graph_find(&g, "f")].plugin, "bandpass");
    graph_free(&g);
    unlink(file);
}

Test(records_graph_recording, relative_path_is_made_absolute_and_missing_file_named)
{
    char cwd[1024];
    cr_assert_not_null(getcwd(cwd, sizeof cwd));
    FILE *f = fopen("weft-rel.bdf", "w");
    cr_assert_not_null(f);
    fclose(f);
    graph g;
    diag d = { 0 };
    cr_assert_eq(graph_load(&g, "t.yaml", text, &d), 0, "%s", d.msg);
    cr_assert_eq(graph_use_recording(&g, "weft-rel.bdf", &d), 0, "%s", d.msg);
    char want[1200];
    snprintf(want, sizeof want, "%s/weft-rel.bdf", cwd);
    cr_expect_str_eq(param(&g.stages[0], "path"), want);
    graph_free(&g);
    unlink("weft-rel.bdf");
    cr_assert_eq(graph_load(&g, "t.yaml", text, &d), 0, "%s", d.msg);
    cr_expect_eq(graph_use_recording(&g, "no-such.bdf", &d), -1);
    cr_expect_str_eq(d.msg, "recording 'no-such.bdf': No such file or directory");
    graph_free(&g);
}
