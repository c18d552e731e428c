/* graph_recording: a loaded graph turned into its replay on a recording -- every source stage
 * becomes the `edf` reader playing the stream named after the stage, so `weft replay` and
 * `weft fit` run the very graph that ran live, on recorded data. */
#ifndef WEFT_GRAPH_RECORDING_H
#define WEFT_GRAPH_RECORDING_H

#include "graph.h"

/* Replace every source stage of g (a stage without inputs) by plugin `edf` with params
 * { path: FILE (made absolute), stream: STAGE, markers: BOOL }: stage `eeg` plays the signals
 * labelled "eeg.*". Only the first source in graph order plays the file's annotations as
 * markers, so cues are not doubled. Recorder sinks are removed: a replay never re-records.
 * The graph model and its YAML tree both change (new nodes are owned by g->doc, marked at the
 * stage's name, so errors still point into the graph file); a caller that writes the graph
 * back out and wants the live sources keeps a second, untouched copy of the graph. Returns 0,
 * or -1 with d saying why (no source, recording not found). */
int graph_use_recording(graph *g, const char *file, diag *d);

#endif
