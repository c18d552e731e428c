/* ABI stability and plugin refusal: a plugin built against the frozen v1 header still loads
 * and runs; other majors, missing entries and unloadable files are refused with messages
 * that say what is wrong. Also: the allocation watch really sees a plugin's malloc. */
#include <criterion/criterion.h>
#include <string.h>

#include "alloc_watch.h"
#include "plugin.h"
#include "stage_driver.h"

#define FIXTURE(name) WEFT_FIXTURE_DIR "/" name ".so"

static const char *const labels[] = { "C3", "C4" };

static weft_layout two_channels(void)
{
    return (weft_layout){ .name = "in", .kind = WEFT_STREAM_SAMPLES, .channels = 2,
                          .rate = 250, .labels = labels, .max_frames = 64 };
}

Test(sdk_abi, plugin_built_against_frozen_v1_header_loads_and_runs)
{
    stage_driver sd;
    diag d = { 0 };
    weft_layout in = two_channels();
    cr_assert_eq(stage_driver_open(&sd, FIXTURE("abi_v1_scale"), "{ factor: 3 }", &in, 1, &d),
                 0, "%s", d.msg);
    cr_assert_eq(sd.n->api->abi_major, 1);
    float x[8] = { 1, -2, 0.5f, 4, 0, 7, -1, 2 }, y[8] = { 0 };
    cr_assert_eq(stage_driver_process(&sd, x, 4, y, 64, &d), 4, "%s", d.msg);
    for (int i = 0; i < 8; i++)
        cr_assert_float_eq(y[i], 3 * x[i], 1e-6f, "sample %d", i);
    stage_driver_close(&sd);
}

Test(sdk_abi, other_major_is_refused_naming_both_versions)
{
    plugin p;
    diag d = { 0 };
    cr_assert_neq(plugin_open(&p, FIXTURE("abi_major2"), &d), 0);
    cr_assert(strstr(d.msg, "built for stage ABI 2"), "%s", d.msg);
    cr_assert(strstr(d.msg, "this host speaks 1"), "%s", d.msg);
    cr_assert(strstr(d.msg, "abi_major2.so"), "names the file: %s", d.msg);
}

Test(sdk_abi, plugin_without_entry_is_refused_naming_the_symbol)
{
    plugin p;
    diag d = { 0 };
    cr_assert_neq(plugin_open(&p, FIXTURE("no_entry"), &d), 0);
    cr_assert(strstr(d.msg, "weft_stage_entry"), "%s", d.msg);
    cr_assert(strstr(d.msg, "no_entry.so"), "%s", d.msg);
}

Test(sdk_abi, plugin_with_unresolved_symbol_is_refused_with_the_loader_message)
{
    plugin p;
    diag d = { 0 };
    cr_assert_neq(plugin_open(&p, FIXTURE("unresolved_symbol"), &d), 0);
    cr_assert(strstr(d.msg, "cannot load"), "%s", d.msg);
    cr_assert(strstr(d.msg, "weft_fixture_function_nobody_defines"), "%s", d.msg);
}

Test(sdk_abi, missing_plugin_file_is_refused_not_crashed)
{
    plugin p;
    diag d = { 0 };
    cr_assert_neq(plugin_open(&p, FIXTURE("no_such_plugin"), &d), 0);
    cr_assert(strstr(d.msg, "no_such_plugin.so"), "%s", d.msg);
}

Test(sdk_abi, build_tree_program_searches_the_build_plugin_folder)
{
    plugin_path path;
    plugin_path_init(&path, NULL);
    int found = 0;
    for (unsigned i = 0; i < path.n; i++)
        found |= strcmp(path.dirs[i], WEFT_PLUGIN_DIR) == 0;
    plugin_path_free(&path);
    cr_assert(found, "the search path of a program in the build tree includes %s",
              WEFT_PLUGIN_DIR);
}

Test(sdk_abi, allocation_watch_counts_a_dlopened_plugins_malloc)
{
    if (!alloc_watch_available()) {
        cr_log_info("sanitizer build: the sanitizer owns malloc; nothing to count");
        return;
    }
    stage_driver sd;
    diag d = { 0 };
    weft_layout in = two_channels();
    cr_assert_eq(stage_driver_open(&sd, FIXTURE("bad_alloc_in_process"), NULL, &in, 1, &d), 0,
                 "%s", d.msg);
    float x[16] = { 0 }, y[16];
    alloc_counts before = alloc_watch_counts();
    alloc_watch_start();
    long frames = stage_driver_process(&sd, x, 8, y, 64, &d);
    alloc_watch_stop();
    alloc_counts after = alloc_watch_counts();
    cr_assert_eq(frames, 8, "%s", d.msg);
    cr_assert_geq(after.allocs - before.allocs, 1, "the plugin's malloc in process was seen");
    cr_assert_eq(after.allocs - before.allocs, after.frees - before.frees);

    /* and a clean plugin's process is seen as allocation-free */
    stage_driver clean;
    cr_assert_eq(stage_driver_open(&clean, FIXTURE("abi_v1_scale"), NULL, &in, 1, &d), 0,
                 "%s", d.msg);
    before = alloc_watch_counts();
    alloc_watch_start();
    frames = stage_driver_process(&clean, x, 8, y, 64, &d);
    alloc_watch_stop();
    cr_assert_eq(frames, 8, "%s", d.msg);
    cr_assert_eq(alloc_watch_counts().allocs, before.allocs);
    stage_driver_close(&clean);
    stage_driver_close(&sd);
}
