/* Graph file validation: every structural error names file:line:column and what is right. */
#include <criterion/criterion.h>
#include <stdlib.h>
#include <string.h>

#include "graph.h"
#include "pipeline.h"

static char message[DIAG_MAX];

/* Load `text` as "t.yaml"; return 0 if valid, else -1 with the message in `message`. */
static int load(const char *text)
{
    graph g;
    diag d = { 0 };
    int rc = graph_load(&g, "t.yaml", text, &d);
    strcpy(message, d.msg);
    graph_free(&g);
    return rc;
}

/* Load and open the plugins too (parameters, roles, layouts). */
static int open_graph(const char *text)
{
    setenv("WEFT_PLUGIN_PATH", WEFT_PLUGIN_DIR ":" WEFT_FIXTURE_DIR, 1);
    graph g;
    pipeline pl;
    diag d = { 0 };
    pipeline_options opt = { 0 };
    int rc = graph_load(&g, "t.yaml", text, &d);
    if (rc == 0) {
        rc = pipeline_open(&pl, &g, &opt, &d);
        if (rc == 0)
            pipeline_close(&pl);
    }
    strcpy(message, d.msg);
    graph_free(&g);
    return rc;
}

#define EXPECT_ERROR(call, prefix, fragment)                                                  \
    do {                                                                                       \
        cr_assert_eq(call, -1, "expected an error");                                           \
        cr_expect(strncmp(message, prefix, strlen(prefix)) == 0, "got: %s", message);          \
        cr_expect(strstr(message, fragment) != NULL, "got: %s", message);                      \
    } while (0)

Test(graph_load, valid_graph_loads)
{
    cr_assert_eq(load("weft: 1\n"
                      "stages:\n"
                      "  a: { plugin: synthetic }\n"
                      "  b: { plugin: jsonl, input: a }\n"),
                 0, "%s", message);
}

Test(graph_load, unknown_key_reports_line_and_column)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  a:\n"
                      "    plugin: synthetic\n"
                      "    parms: { rate: 250 }\n"),
                 "t.yaml:5:5:", "unknown key 'parms' in a stage; did you mean 'params'?");
}

Test(graph_load, unknown_top_level_key)
{
    EXPECT_ERROR(load("weft: 1\nstage:\n  a: { plugin: x }\n"), "t.yaml:2:1:",
                 "did you mean 'stages'");
}

Test(graph_load, wrong_type_names_expected_type)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  a: { plugin: synthetic }\n"
                      "  r: { plugin: p, input: a, window: [1], query: { every: 0.1 } }\n"),
                 "t.yaml:4:37:", "window must be a single value, not a list");
}

Test(graph_load, non_numeric_window_is_rejected)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  a: { plugin: synthetic }\n"
                      "  r: { plugin: p, input: a, window: long, query: { every: 0.1 } }\n"),
                 "t.yaml:4:37:", "window must be a finite number, not 'long'");
}

Test(graph_load, unknown_input_suggests_nearest_stage)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  eeg: { plugin: synthetic }\n"
                      "  show: { plugin: jsonl, input: eg }\n"),
                 "t.yaml:4:33:", "input 'eg' is not a stage of this graph; did you mean 'eeg'?");
}

Test(graph_load, missing_from_in_input_map)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  a: { plugin: synthetic }\n"
                      "  r:\n"
                      "    plugin: p\n"
                      "    input: [ { window: 1 } ]\n"
                      "    query: { every: 1 }\n"),
                 "t.yaml:6:14:", "input without `from:`");
}

Test(graph_load, cycle_names_the_stages_on_it)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  a: { plugin: f, input: c }\n"
                      "  b: { plugin: f, input: a }\n"
                      "  c: { plugin: f, input: b }\n"),
                 "t.yaml:3:3:", "cycle (a -> c -> b -> a)");
}

Test(graph_load, self_input_is_rejected)
{
    EXPECT_ERROR(load("weft: 1\nstages:\n  a: { plugin: f, input: a }\n"), "t.yaml:3:26:",
                 "cannot be its own input");
}

Test(graph_load, duplicate_stage_name_is_an_error)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  eeg: { plugin: synthetic }\n"
                      "  eeg: { plugin: synthetic }\n"),
                 "t.yaml:4:3:", "key 'eeg' appears twice");
}

Test(graph_load, window_longer_than_history)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "history: 5\n"
                      "stages:\n"
                      "  a: { plugin: synthetic }\n"
                      "  r: { plugin: p, input: { from: a, window: 6 }, query: { every: 1 } }\n"),
                 "t.yaml:5:45:", "window 6 s is longer than the 5 s of history kept");
}

Test(graph_load, plugin_name_must_not_be_a_path)
{
    EXPECT_ERROR(load("weft: 1\nstages:\n  a: { plugin: ../evil }\n"), "t.yaml:3:16:",
                 "must be a plain name");
    EXPECT_ERROR(load("weft: 1\nstages:\n  a: { plugin: lib/x }\n"), "t.yaml:3:16:",
                 "write `path: lib/x`");
}

Test(graph_load, missing_format_version)
{
    EXPECT_ERROR(load("stages:\n  a: { plugin: synthetic }\n"), "t.yaml:1:1:",
                 "missing `weft: 1`");
    EXPECT_ERROR(load("weft: 7\nstages:\n  a: { plugin: synthetic }\n"), "t.yaml:1:7:",
                 "graph format 7 is not known");
}

Test(graph_load, invalid_yaml_reports_position)
{
    EXPECT_ERROR(load("weft: 1\nstages:\n  a: { plugin: synthetic\n  b: 3\n"), "t.yaml:",
                 "not valid YAML");
}

Test(graph_load, empty_file_is_explained)
{
    EXPECT_ERROR(load(""), "t.yaml: ", "the file is empty");
}

Test(graph_load, query_needs_a_schedule)
{
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  a: { plugin: synthetic }\n"
                      "  r: { plugin: p, input: a, window: 1, query: { after: 1 } }\n"),
                 "t.yaml:4:", "after is a delay >= 0 s following an on_marker label");
    EXPECT_ERROR(load("weft: 1\n"
                      "stages:\n"
                      "  a: { plugin: synthetic }\n"
                      "  r: { plugin: p, input: a, window: 1, query: { } }\n"),
                 "t.yaml:4:47:", "needs `every: SECONDS` or `on_marker: [LABELS]`");
}

Test(graph_load, anchors_and_aliases_are_refused)
{
    EXPECT_ERROR(load("weft: 1\nstages:\n  a: &x { plugin: synthetic }\n  b: *x\n"),
                 "t.yaml:3:6:", "anchors");
}

Test(graph_open, parameter_out_of_range_names_the_value_and_limits)
{
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  eeg:\n"
                            "    plugin: synthetic\n"
                            "    params: { rate: 5 }\n"),
                 "t.yaml:5:21:", "rate = 5 Hz is out of range; it must be between 10 and");
}

Test(graph_open, unknown_parameter_suggests_declared_one)
{
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  eeg: { plugin: synthetic, params: { chanels: 4 } }\n"),
                 "t.yaml:3:39:", "no parameter 'chanels'; did you mean 'channels'?");
}

Test(graph_open, parameter_of_wrong_type)
{
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  eeg: { plugin: synthetic, params: { channels: 2.5 } }\n"),
                 "t.yaml:3:49:", "channels must be a whole number, not '2.5'");
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  eeg: { plugin: synthetic, params: { signal: ecg } }\n"),
                 "t.yaml:3:47:", "signal = 'ecg' is not one of eeg|emg");
}

Test(graph_open, plugin_error_points_at_the_parameter)
{
    /* synthetic reports line_freq above Nyquist through host->param_error. */
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  eeg:\n"
                            "    plugin: synthetic\n"
                            "    params:\n"
                            "      rate: 80\n"
                            "      line_freq: 60\n"),
                 "t.yaml:7:18:", "stage 'eeg': line_freq 60 Hz must be below half the rate");
}

Test(graph_open, missing_plugin_lists_the_search_path)
{
    EXPECT_ERROR(open_graph("weft: 1\nstages:\n  a: { plugin: nosuchplugin }\n"),
                 "t.yaml:3:16:", "no plugin 'nosuchplugin' (nosuchplugin.so) in");
}

Test(graph_open, readout_results_only_go_to_sinks)
{
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  a: { plugin: host_ramp }\n"
                            "  r: { plugin: host_probe, input: a, window: 1, query: { every: 1 } }\n"
                            "  r2: { plugin: host_probe, input: r, window: 1, query: { every: 1 } }\n"),
                 "t.yaml:5:36:", "input 'r' is a readout; its results can only go to a sink");
}

Test(graph_open, windows_belong_to_readouts)
{
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  a: { plugin: host_ramp }\n"
                            "  s: { plugin: jsonl, input: { from: a, window: 1 } }\n"),
                 "t.yaml:4:49:", "only readouts take windows");
}

Test(graph_open, readout_without_query_is_explained)
{
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  a: { plugin: host_ramp }\n"
                            "  r: { plugin: host_probe, input: a, window: 1 }\n"),
                 "t.yaml:4:3:", "a readout needs `query:");
}

Test(graph_open, source_with_input_is_rejected)
{
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  a: { plugin: host_ramp }\n"
                            "  b: { plugin: host_ramp, input: a }\n"),
                 "t.yaml:4:34:", "is a source and takes no input");
}

Test(graph_open, jsonl_refuses_sample_streams)
{
    EXPECT_ERROR(open_graph("weft: 1\n"
                            "stages:\n"
                            "  a: { plugin: host_ramp }\n"
                            "  s: { plugin: jsonl, input: a }\n"),
                 "t.yaml:4:3:", "jsonl writes readout results");
}
