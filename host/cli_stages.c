/* cli_stages: `weft stages` -- the plugins on the search path and what they accept. */
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "params.h"
#include "pipeline.h"
#include "plugin.h"

static const char help[] =
    "usage: weft stages [--describe NAME]\n"
    "\n"
    "Lists the plugins found on the search path (WEFT_PLUGIN_PATH, the build tree, the\n"
    "install folder) with role, version and summary. --describe NAME prints one plugin's\n"
    "parameters: type, default, range, unit and help.\n";

static void roles_text(uint32_t roles, char *buf, size_t size)
{
    snprintf(buf, size, "%s%s", role_name(roles & ~(uint32_t)WEFT_ROLE_FITTABLE),
             roles & WEFT_ROLE_FITTABLE ? "+fittable" : "");
}

static void describe(const plugin *p)
{
    const weft_stage_api *api = p->api;
    char roles[32];
    roles_text(api->roles, roles, sizeof roles);
    printf("%s %s (%s): %s\n  file: %s\n  stage ABI %u.%u; inputs %u..%u\n", api->name,
           api->version, roles, api->summary ? api->summary : "", p->file, api->abi_major,
           api->abi_minor, api->min_inputs, api->max_inputs);
    if (!api->params || !api->params[0].name) {
        printf("  no parameters\n");
        return;
    }
    printf("  parameters:\n");
    for (const weft_param_spec *s = api->params; s->name; s++) {
        printf("    %-12s %s", s->name, param_type_name(s->type));
        if (s->type == WEFT_PARAM_CHOICE && s->choices)
            printf(" (%s)", s->choices);
        if (s->flags & WEFT_PARAM_LEARNED)
            printf(", learned by fit");
        else if (s->default_text)
            printf(", default %s", s->default_text);
        else
            printf(", required");
        if (s->min <= s->max)
            printf(", %g..%g", s->min, s->max);
        if (s->unit && s->unit[0])
            printf(" %s", s->unit);
        printf("\n");
        if (s->help)
            printf("                 %s\n", s->help);
    }
}

static int list_dir(const char *dir, const char *only, int *found)
{
    DIR *dh = opendir(dir);
    if (!dh)
        return 0;
    struct dirent *e;
    char **names = NULL;
    size_t n = 0;
    while ((e = readdir(dh))) {
        size_t len = strlen(e->d_name);
        if (len < 4 || strcmp(e->d_name + len - 3, ".so"))
            continue;
        char **grown = realloc(names, (n + 1) * sizeof *names);
        if (!grown)
            break;
        names = grown;
        names[n++] = strdup(e->d_name);
    }
    closedir(dh);
    for (size_t i = 0; i < n; i++)
        for (size_t j = i + 1; j < n; j++)
            if (names[i] && names[j] && strcmp(names[i], names[j]) > 0) {
                char *t = names[i];
                names[i] = names[j];
                names[j] = t;
            }
    for (size_t i = 0; i < n; i++) {
        if (!names[i])
            continue;
        char file[4096];
        snprintf(file, sizeof file, "%s/%s", dir, names[i]);
        plugin p;
        diag d = { 0 };
        if (plugin_open(&p, file, &d)) {
            if (!only)
                printf("  %-14s (not loadable: %s)\n", names[i], d.msg);
        } else if (only && !strcmp(p.api->name, only)) {
            describe(&p);
            *found = 1;
        } else if (!only) {
            char roles[32];
            roles_text(p.api->roles, roles, sizeof roles);
            printf("  %-14s %-8s %-17s %s\n", p.api->name, p.api->version, roles,
                   p.api->summary ? p.api->summary : "");
            *found = 1;
        }
        if (p.handle)
            plugin_close(&p);
        if (*found && only)
            break;
    }
    for (size_t i = 0; i < n; i++)
        free(names[i]);
    free(names);
    return 0;
}

int cli_stages(int argc, char **argv)
{
    const char *only = NULL;
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--help") || !strcmp(argv[i], "-h")) {
            fputs(help, stdout);
            return EXIT_OK;
        } else if (!strcmp(argv[i], "--describe") && i + 1 < argc) {
            only = argv[++i];
        } else if (argv[i][0] != '-' && !only) {
            only = argv[i];
        } else {
            fputs(help, stderr);
            return EXIT_USAGE;
        }
    }
    plugin_path path;
    plugin_path_init(&path, NULL);
    int found = 0;
    for (unsigned i = 0; i < path.n && !(only && found); i++) {
        if (!only)
            printf("%s:\n", path.dirs[i]);
        list_dir(path.dirs[i], only, &found);
    }
    plugin_path_free(&path);
    if (only && !found) {
        fprintf(stderr, "weft: no plugin named '%s' on the search path\n", only);
        return EXIT_INVALID;
    }
    return EXIT_OK;
}
