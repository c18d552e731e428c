/* channel_labels: a stage's own copy of its input's channel labels, for an output layout with
 * the same channels (the layout's labels must stay valid until the stage is destroyed). */
#ifndef DSP_CHANNEL_LABELS_H
#define DSP_CHANNEL_LABELS_H

#include <weft/stage.h>

typedef struct channel_labels {
    char *text;                 /* all labels, each ending with '\0' */
    const char **ptrs;          /* one per channel, into text */
} channel_labels;

/* Copy in->labels (if any) and point out->labels at the copy. Returns 0 or WEFT_ENOMEM. */
int channel_labels_copy(channel_labels *cl, const weft_layout *in, weft_layout *out);
void channel_labels_free(channel_labels *cl);

#endif
