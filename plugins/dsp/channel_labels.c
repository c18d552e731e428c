/* channel_labels: copying an input layout's labels for the output layout. */
#include "channel_labels.h"

#include <stdlib.h>
#include <string.h>

int channel_labels_copy(channel_labels *cl, const weft_layout *in, weft_layout *out)
{
    cl->text = NULL;
    cl->ptrs = NULL;
    out->labels = NULL;
    if (!in->labels || in->channels == 0)
        return WEFT_OK;
    size_t total = 0;
    for (uint32_t c = 0; c < in->channels; c++)
        total += strlen(in->labels[c] ? in->labels[c] : "") + 1;
    cl->text = malloc(total);
    cl->ptrs = malloc(in->channels * sizeof *cl->ptrs);
    if (!cl->text || !cl->ptrs) {
        channel_labels_free(cl);
        return WEFT_ENOMEM;
    }
    char *at = cl->text;
    for (uint32_t c = 0; c < in->channels; c++) {
        const char *label = in->labels[c] ? in->labels[c] : "";
        size_t len = strlen(label) + 1;
        memcpy(at, label, len);
        cl->ptrs[c] = at;
        at += len;
    }
    out->labels = cl->ptrs;
    return WEFT_OK;
}

void channel_labels_free(channel_labels *cl)
{
    free(cl->text);
    free(cl->ptrs);
    cl->text = NULL;
    cl->ptrs = NULL;
}
