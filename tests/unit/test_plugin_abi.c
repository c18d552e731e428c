/* Plugin loading: ABI version check, missing entry symbol, unloadable files, search path. */
#include <criterion/criterion.h>
#include <stdlib.h>
#include <string.h>

#include "plugin.h"

Test(plugin_abi, other_major_version_is_refused_with_both_numbers)
{
    plugin p;
    diag d = { 0 };
    cr_assert_eq(plugin_open(&p, WEFT_FIXTURE_DIR "/host_abi_v2.so", &d), -1);
    cr_expect(strstr(d.msg, "host_abi_v2.so: built for stage ABI 2, this host speaks 1"),
              "got: %s", d.msg);
}

Test(plugin_abi, missing_entry_symbol_names_the_file)
{
    plugin p;
    diag d = { 0 };
    cr_assert_eq(plugin_open(&p, WEFT_FIXTURE_DIR "/host_no_entry.so", &d), -1);
    cr_expect(strstr(d.msg, "host_no_entry.so: no weft_stage_entry() entry"), "got: %s",
              d.msg);
}

Test(plugin_abi, unloadable_file_reports_the_loader_message)
{
    plugin p;
    diag d = { 0 };
    cr_assert_eq(plugin_open(&p, WEFT_SOURCE_DIR "/README.md", &d), -1);
    cr_expect(strstr(d.msg, "README.md: cannot load:"), "got: %s", d.msg);
    diag_clear(&d);
    cr_assert_eq(plugin_open(&p, "/nonexistent/x.so", &d), -1);
    cr_expect(strstr(d.msg, "No such file"), "got: %s", d.msg);
}

Test(plugin_abi, sample_plugin_loads_and_is_complete)
{
    plugin p;
    diag d = { 0 };
    cr_assert_eq(plugin_open(&p, WEFT_PLUGIN_DIR "/synthetic.so", &d), 0, "%s", d.msg);
    cr_expect_str_eq(p.api->name, "synthetic");
    cr_expect_eq(p.api->abi_major, WEFT_ABI_MAJOR);
    plugin_close(&p);
}

Test(plugin_abi, descriptor_without_required_callbacks_is_refused)
{
    weft_stage_api api = { WEFT_API_HEADER, .roles = WEFT_ROLE_READOUT, .name = "r",
                           .version = "1" };
    diag d = { 0 };
    cr_expect_eq(plugin_check_api(&api, "r.so", &d), -1);
    cr_expect(strstr(d.msg, "init and destroy are required"), "got: %s", d.msg);
    api.roles = WEFT_ROLE_SOURCE | WEFT_ROLE_SINK;
    diag_clear(&d);
    cr_expect_eq(plugin_check_api(&api, "r.so", &d), -1);
    cr_expect(strstr(d.msg, "must be exactly one of"), "got: %s", d.msg);
    api.struct_size = 8;
    diag_clear(&d);
    cr_expect_eq(plugin_check_api(&api, "r.so", &d), -1);
    cr_expect(strstr(d.msg, "smaller than ABI 1.0 allows"), "got: %s", d.msg);
}

Test(plugin_abi, search_path_order_is_graph_dir_then_environment)
{
    setenv("WEFT_PLUGIN_PATH", "/nonexistent-a:" WEFT_FIXTURE_DIR, 1);
    plugin_path path;
    plugin_path_init(&path, WEFT_PLUGIN_DIR);
    cr_assert_geq(path.n, 3);
    cr_expect_str_eq(path.dirs[0], WEFT_PLUGIN_DIR);
    cr_expect_str_eq(path.dirs[1], "/nonexistent-a");
    cr_expect_str_eq(path.dirs[2], WEFT_FIXTURE_DIR);
    char *file = NULL;
    diag d = { 0 };
    cr_assert_eq(plugin_find(&path, "host_probe", &file, &d), 0, "%s", d.msg);
    cr_expect_str_eq(file, WEFT_FIXTURE_DIR "/host_probe.so");
    free(file);
    cr_expect_eq(plugin_find(&path, "absent", &file, &d), -1);
    cr_expect(strstr(d.msg, "/nonexistent-a"), "the message lists where it looked: %s", d.msg);
    plugin_path_free(&path);
}
