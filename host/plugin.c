/* plugin: search path, dlopen and the ABI check. */
#define _XOPEN_SOURCE 700 /* realpath */
#include "plugin.h"

#include <dlfcn.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#ifndef WEFT_BUILD_DIR
#define WEFT_BUILD_DIR ""
#endif
#ifndef WEFT_PLUGIN_BUILD_DIR
#define WEFT_PLUGIN_BUILD_DIR ""
#endif
#ifndef WEFT_PLUGIN_INSTALL_DIR
#define WEFT_PLUGIN_INSTALL_DIR "/usr/local/lib/weft/plugins"
#endif
#ifndef WEFT_PLUGIN_INSTALL_REL
#define WEFT_PLUGIN_INSTALL_REL "../lib/weft/plugins"
#endif

static int is_dir(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0 && S_ISDIR(st.st_mode);
}

static int same_dir(const char *a, const char *b)
{
    struct stat sa, sb;
    return stat(a, &sa) == 0 && stat(b, &sb) == 0 && sa.st_dev == sb.st_dev &&
           sa.st_ino == sb.st_ino;
}

static void add_dir(plugin_path *p, const char *dir, size_t len)
{
    if (len == 0 || p->n >= sizeof p->dirs / sizeof p->dirs[0])
        return;
    char *copy = strndup(dir, len);
    if (!copy)
        return;
    for (unsigned i = 0; i < p->n; i++)
        if (!strcmp(p->dirs[i], copy) || same_dir(p->dirs[i], copy)) {
            free(copy);
            return;
        }
    p->dirs[p->n++] = copy;
}

/* The folder holding the running program, from /proc/self/exe (symlinks resolved), so an
 * installed tree can be moved or unpacked anywhere and still find its own plugins. */
static int exe_dir(char *buf, size_t size)
{
    ssize_t len = readlink("/proc/self/exe", buf, size - 1);
    if (len <= 0 || (size_t)len >= size - 1)
        return -1;
    buf[len] = 0;
    char *slash = strrchr(buf, '/');
    if (!slash)
        return -1;
    *slash = 0;
    return 0;
}

/* A program inside the build tree (the weft binary, a test) uses the build tree's plugins;
 * an installed one uses <its folder>/WEFT_PLUGIN_INSTALL_REL, i.e. <prefix>/lib/weft/plugins. */
static void add_program_dirs(plugin_path *p)
{
    char dir[4096], rel[4096 + 64];
    if (exe_dir(dir, sizeof dir))
        return;
    snprintf(rel, sizeof rel, "%s/%s", dir, WEFT_PLUGIN_INSTALL_REL);
    if (is_dir(rel)) {
        char *resolved = realpath(rel, NULL);
        add_dir(p, resolved ? resolved : rel, strlen(resolved ? resolved : rel));
        free(resolved);
    }
    char build[4096];
    size_t blen = strlen(WEFT_BUILD_DIR);
    if (blen && realpath(WEFT_BUILD_DIR, build)) {
        blen = strlen(build);
        if (!strncmp(dir, build, blen) && (dir[blen] == '/' || dir[blen] == 0))
            add_dir(p, WEFT_PLUGIN_BUILD_DIR, strlen(WEFT_PLUGIN_BUILD_DIR));
    }
}

void plugin_path_init(plugin_path *p, const char *graph_dir)
{
    memset(p, 0, sizeof *p);
    if (graph_dir)
        add_dir(p, graph_dir, strlen(graph_dir));
    const char *env = getenv("WEFT_PLUGIN_PATH");
    while (env && *env) {
        const char *colon = strchr(env, ':');
        size_t len = colon ? (size_t)(colon - env) : strlen(env);
        add_dir(p, env, len);
        env = colon ? colon + 1 : NULL;
    }
    add_program_dirs(p);
    /* The configured install folder last: for a program run from elsewhere (a copy of the
     * binary), and where /proc is not mounted. */
    if (is_dir(WEFT_PLUGIN_INSTALL_DIR))
        add_dir(p, WEFT_PLUGIN_INSTALL_DIR, strlen(WEFT_PLUGIN_INSTALL_DIR));
}

void plugin_path_free(plugin_path *p)
{
    for (unsigned i = 0; i < p->n; i++)
        free(p->dirs[i]);
    p->n = 0;
}

int plugin_find(const plugin_path *p, const char *name, char **file, diag *d)
{
    char looked[768] = "";
    for (unsigned i = 0; i < p->n; i++) {
        size_t len = strlen(p->dirs[i]) + strlen(name) + 5;
        char *candidate = malloc(len);
        if (!candidate)
            return diag_set(d, "out of memory");
        snprintf(candidate, len, "%s/%s.so", p->dirs[i], name);
        if (access(candidate, R_OK) == 0) {
            *file = candidate;
            return 0;
        }
        free(candidate);
        strncat(looked, i ? ", " : "", sizeof looked - strlen(looked) - 1);
        strncat(looked, p->dirs[i], sizeof looked - strlen(looked) - 1);
    }
    return diag_set(d, "no plugin '%s' (%s.so) in %s; set WEFT_PLUGIN_PATH or give "
                       "`path:` in the graph", name, name, looked[0] ? looked : "no folder");
}

int plugin_check_api(const weft_stage_api *api, const char *file, diag *d)
{
    if (!api)
        return diag_set(d, "plugin %s: weft_stage_entry() returned no descriptor", file);
    if (api->abi_major != WEFT_ABI_MAJOR)
        return diag_set(d, "plugin %s: built for stage ABI %u, this host speaks %d; rebuild it "
                           "against this weft's SDK", file, api->abi_major, WEFT_ABI_MAJOR);
    /* Major 1 began with the struct as it is at minor 0; anything shorter is corrupt. */
    if (api->struct_size < offsetof(weft_stage_api, destroy) + sizeof api->destroy)
        return diag_set(d, "plugin %s: descriptor is %u bytes, smaller than ABI %d.0 allows",
                        file, api->struct_size, WEFT_ABI_MAJOR);
    const char *name = api->name ? api->name : "(unnamed)";
    uint32_t known = WEFT_ROLE_SOURCE | WEFT_ROLE_FILTER | WEFT_ROLE_READOUT | WEFT_ROLE_SINK |
                     WEFT_ROLE_FITTABLE;
    uint32_t primary = api->roles & (known & ~(uint32_t)WEFT_ROLE_FITTABLE);
    if (!api->name || !api->name[0] || !api->version)
        return diag_set(d, "plugin %s: descriptor has no name or version", file);
    if ((api->roles & ~known) || primary == 0 || (primary & (primary - 1)))
        return diag_set(d, "plugin %s ('%s'): roles 0x%x must be exactly one of source, filter, "
                           "readout or sink (plus fittable)", file, name, api->roles);
    if (!api->init || !api->destroy)
        return diag_set(d, "plugin %s ('%s'): init and destroy are required", file, name);
    if ((primary & (WEFT_ROLE_SOURCE | WEFT_ROLE_FILTER)) && !api->process)
        return diag_set(d, "plugin %s ('%s'): a source or filter needs process", file, name);
    if ((primary & WEFT_ROLE_READOUT) && !api->query)
        return diag_set(d, "plugin %s ('%s'): a readout needs query", file, name);
    if ((api->roles & WEFT_ROLE_FITTABLE) && !api->fit)
        return diag_set(d, "plugin %s ('%s'): a fittable stage needs fit", file, name);
    if ((primary & WEFT_ROLE_SINK) && !api->process && !api->deliver)
        return diag_set(d, "plugin %s ('%s'): a sink needs process or deliver", file, name);
    if (api->min_inputs > api->max_inputs)
        return diag_set(d, "plugin %s ('%s'): min_inputs %u > max_inputs %u", file, name,
                        api->min_inputs, api->max_inputs);
    for (const weft_param_spec *s = api->params; s && s->name; s++)
        if (s->type < WEFT_PARAM_NUMBER || s->type > WEFT_PARAM_STRINGS)
            return diag_set(d, "plugin %s ('%s'): parameter '%s' has unknown type %u", file,
                            name, s->name, s->type);
    return 0;
}

int plugin_open(plugin *pl, const char *file, diag *d)
{
    memset(pl, 0, sizeof *pl);
    /* RTLD_LOCAL keeps two plugins' internal symbols apart; RTLD_NOW fails here rather than
     * at the first call in the middle of a run. */
    void *h = dlopen(file, RTLD_NOW | RTLD_LOCAL);
    if (!h)
        return diag_set(d, "plugin %s: cannot load: %s", file, dlerror());
    dlerror();
    void *sym = dlsym(h, WEFT_STAGE_ENTRY_SYMBOL);
    const char *err = dlerror();
    if (!sym || err) {
        diag_set(d, "plugin %s: no %s() entry: %s", file, WEFT_STAGE_ENTRY_SYMBOL,
                 err ? err : "symbol is NULL");
        dlclose(h);
        return -1;
    }
    weft_stage_entry_fn entry;
    memcpy(&entry, &sym, sizeof entry); /* object-to-function pointer, as POSIX allows */
    const weft_stage_api *api = entry();
    if (plugin_check_api(api, file, d)) {
        dlclose(h);
        return -1;
    }
    pl->handle = h;
    pl->api = api;
    pl->file = strdup(file);
    return 0;
}

void plugin_close(plugin *pl)
{
    if (pl->handle)
        dlclose(pl->handle);
    free(pl->file);
    memset(pl, 0, sizeof *pl);
}
