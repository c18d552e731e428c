/* report: a replay's outcome written out -- metrics as JSON for programs, and a
 * self-contained HTML page with SVG plots for people. */
#ifndef WEFT_REPORT_H
#define WEFT_REPORT_H

#include <stdio.h>

#include "replay.h"

/* Metrics, definitions and every scored prediction as one JSON object. */
int report_json(FILE *out, const replay *r, const char *graph_path);

/* One HTML file, no external resources: probability time course with the cues, confusion
 * matrices and score histograms per class, the metrics table and latency figures. */
int report_html(FILE *out, const replay *r, const char *graph_path);

#endif
