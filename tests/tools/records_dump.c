/* records_dump: play a source plugin outside a graph and write what it produces -- float32
 * samples (interleaved, little-endian) to one file and markers as "index duration label"
 * lines to another -- so the recording reference checks can compare weft's own samples with
 * what outside readers (mne) make of weft's files.
 *   records_dump PLUGIN.so PARAMS_YAML FRAMES SAMPLES_OUT MARKERS_OUT
 * Prints "channels rate" on stdout. */
#include <stdio.h>
#include <stdlib.h>

#include "stage_driver.h"

int main(int argc, char **argv)
{
    if (argc != 6) {
        fprintf(stderr, "usage: records_dump PLUGIN.so PARAMS FRAMES SAMPLES MARKERS\n");
        return 2;
    }
    stage_driver sd;
    diag d = { 0 };
    if (stage_driver_open(&sd, argv[1], argv[2], NULL, 0, &d)) {
        fprintf(stderr, "records_dump: %s\n", d.msg);
        return 1;
    }
    const weft_layout *out = stage_driver_out(&sd);
    unsigned long want = strtoul(argv[3], NULL, 10);
    FILE *samples = fopen(argv[4], "wb"), *markers = fopen(argv[5], "w");
    float *buf = malloc((size_t)out->max_frames * out->channels * sizeof *buf);
    weft_marker marks[NODE_MARKERS_MAX];
    if (!samples || !markers || !buf) {
        perror("records_dump");
        return 1;
    }
    unsigned long done = 0;
    while (done < want) {
        uint32_t n = want - done < out->max_frames ? (uint32_t)(want - done) : out->max_frames;
        weft_block b = { .data = buf, .capacity = n, .channels = out->channels,
                         .first_index = done, .markers = marks,
                         .marker_capacity = NODE_MARKERS_MAX };
        int rc = sd.n->api->process(sd.n->self, NULL, 0, &b);
        if (rc < 0) {
            fprintf(stderr, "records_dump: the source failed: %s\n", sd.n->error);
            return 1;
        }
        for (uint32_t m = 0; m < b.n_markers; m++)
            fprintf(markers, "%llu %.9g %s\n", (unsigned long long)marks[m].index,
                    marks[m].duration, marks[m].label);
        fwrite(buf, sizeof *buf, (size_t)b.frames * out->channels, samples);
        done += b.frames;
        if (rc == WEFT_END)
            break;
    }
    printf("%u %.9g %lu\n", out->channels, out->rate, done);
    fclose(samples);
    fclose(markers);
    free(buf);
    stage_driver_close(&sd);
    return 0;
}
