/* plugin: finding a stage's shared object on the search path, opening it, and checking that
 * it speaks this host's ABI. Knows nothing of graphs or YAML. */
#ifndef WEFT_PLUGIN_H
#define WEFT_PLUGIN_H

#include <weft/stage.h>

#include "diag.h"

typedef struct plugin {
    void *handle;
    const weft_stage_api *api;
    char *file;                 /* the path that was opened */
} plugin;

/* The folders searched for NAME.so, in order: `graph_dir` (may be NULL), each entry of
 * WEFT_PLUGIN_PATH (':'-separated), then the running program's own plugins -- found from
 * /proc/self/exe, so an installed tree may be moved: <prefix>/bin/weft uses
 * <prefix>/lib/weft/plugins, a program inside the build tree uses build/plugins -- and last
 * the configured install folder, if it exists. */
typedef struct plugin_path {
    char *dirs[64];
    unsigned n;
} plugin_path;

void plugin_path_init(plugin_path *p, const char *graph_dir);
void plugin_path_free(plugin_path *p);

/* Find NAME.so on the path. Returns 0 and a malloc'd path, or -1 with a message listing
 * where it looked. */
int plugin_find(const plugin_path *p, const char *name, char **file, diag *d);

/* Open a plugin file, resolve weft_stage_entry and check the descriptor (ABI major, struct
 * size, name, callbacks required by its roles). Returns 0, or -1 naming the file and the
 * loader's message. */
int plugin_open(plugin *pl, const char *file, diag *d);
void plugin_close(plugin *pl);

/* Check a descriptor as plugin_open does (exposed for tests and the conformance checker). */
int plugin_check_api(const weft_stage_api *api, const char *file, diag *d);

#endif
