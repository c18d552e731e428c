/* cli_stages: `weft stages` -- the plugins on the search path and what they accept. */
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "params.h"
#include "pipeline.h"
#include "plugin.h"
#include "verify.h"

static const char help[] =
    "usage: weft stages [--describe] [NAME]\n"
    "       weft stages --verify FILE.so|NAME [--params YAML] [--inputs C@RATE[,...]]\n"
    "                   [--window SECONDS] [--values any] [--timeout SECONDS]\n"
    "\n"
    "Lists the plugins found on the search path (WEFT_PLUGIN_PATH, the program's own plugin\n"
    "folder, the install folder) with role, version and summary. --describe NAME prints one\n"
    "plugin's parameters: type, default, range, unit and help.\n"
    "\n"
    "--verify checks one plugin against the stage ABI's contracts (loading, ABI version,\n"
    "declared parameters, init with odd parameters and layouts, chunk-size invariance,\n"
    "determinism, no allocation while streaming, finite output, readout probabilities,\n"
    "clean destroy), each check in its own process, and prints a Markdown table to paste\n"
    "into a pull request. Exit 0 if every check passed or was skipped, 1 if one failed.\n"
    "  --params YAML    parameter values, e.g. '{ low: 8, high: 30 }' (default: defaults)\n"
    "  --inputs SPEC    input layouts, e.g. 4@250 or 8@250,2@1000 (default: 4 channels at\n"
    "                   250 Hz; a readout's second input 2 at 1000 Hz)\n"
    "  --window S       readout window in seconds (default 1)\n"
    "  --values any     readout values need only be finite, not class probabilities\n"
    "  --timeout S      seconds each check may take (default 30)\n";

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
        if (s->min <= s->max && s->type == WEFT_PARAM_INTEGER)
            printf(", %.0f..%.0f", s->min, s->max); /* %g would show 2147483647 as 2.14748e+09 */
        else if (s->min <= s->max)
            printf(", %.15g..%.15g", s->min, s->max);
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

/* A plugin named on the command line: a file if it looks like one, else a name to search. */
static char *resolve_plugin(const char *what)
{
    if (strchr(what, '/') || (strlen(what) > 3 && !strcmp(what + strlen(what) - 3, ".so")))
        return strdup(what);
    plugin_path path;
    plugin_path_init(&path, NULL);
    char *file = NULL;
    diag d = { 0 };
    if (plugin_find(&path, what, &file, &d))
        fprintf(stderr, "weft: %s\n", d.msg);
    plugin_path_free(&path);
    return file;
}

static int verify_option(int argc, char **argv, int *i, verify_options *vo)
{
    const char *arg = argv[*i];
    const char *value = *i + 1 < argc ? argv[*i + 1] : NULL;
    unsigned long count;
    diag d = { 0 };
    if (!value) {
        fprintf(stderr, "weft stages: %s needs a value\n", arg);
        return -1;
    }
    ++*i;
    if (!strcmp(arg, "--params")) {
        vo->params = value;
    } else if (!strcmp(arg, "--inputs")) {
        if (verify_parse_inputs(value, vo, &d)) {
            fprintf(stderr, "weft stages: %s\n", d.msg);
            return -1;
        }
    } else if (!strcmp(arg, "--window")) {
        return cli_number(arg, value, &vo->window);
    } else if (!strcmp(arg, "--timeout")) {
        if (cli_count(arg, value, &count))
            return -1;
        vo->timeout = count > 3600 ? 3600 : (unsigned)count;
    } else if (!strcmp(arg, "--values") && !strcmp(value, "any")) {
        vo->values_any = 1;
    } else {
        fprintf(stderr, "weft stages: unknown option '%s %s'\n\n%s", arg, value, help);
        return -1;
    }
    return 0;
}

static int run_verify(const char *what, const verify_options *vo)
{
    char *file = resolve_plugin(what);
    if (!file)
        return EXIT_INVALID;
    int failed = verify_plugin(file, vo, stdout);
    free(file);
    if (failed < 0)
        return EXIT_USAGE;
    return failed ? EXIT_FAILED : EXIT_OK;
}

int cli_stages(int argc, char **argv)
{
    const char *only = NULL, *verify = NULL;
    verify_options vo = { 0 };
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--help") || !strcmp(argv[i], "-h")) {
            fputs(help, stdout);
            return EXIT_OK;
        } else if (!strcmp(argv[i], "--describe") && i + 1 < argc) {
            only = argv[++i];
        } else if (!strcmp(argv[i], "--verify") && i + 1 < argc) {
            verify = argv[++i];
        } else if (!strncmp(argv[i], "--", 2) && verify) {
            if (verify_option(argc, argv, &i, &vo))
                return EXIT_USAGE;
        } else if (argv[i][0] != '-' && !only && !verify) {
            only = argv[i];
        } else {
            fputs(help, stderr);
            return EXIT_USAGE;
        }
    }
    if (verify)
        return only ? EXIT_USAGE : run_verify(verify, &vo);
    plugin_path path;
    plugin_path_init(&path, NULL);
    int found = 0;
    for (unsigned i = 0; i < path.n && !(only && found); i++) {
        if (access(path.dirs[i], F_OK) != 0)
            continue; /* a folder of the search path that does not exist here */
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
