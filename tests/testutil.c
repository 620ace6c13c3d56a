#include "testutil.h"
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

int pp_test_passed, pp_test_failed;

int pp_test_done(void)
{
    printf("%d passed, %d failed\n", pp_test_passed, pp_test_failed);
    return pp_test_failed ? 1 : 0;
}

const char *pp_test_tmpdir(void)
{
    static char dir[4096];
    const char *d = getenv("PP_TEST_TMP");
    snprintf(dir, sizeof dir, "%s", d && *d ? d : "/tmp/pp_test");
    static char cmd[2 * sizeof dir + 64];
    snprintf(cmd, sizeof cmd, "rm -rf '%s' && mkdir -p '%s'", dir, dir);
    if (system(cmd) != 0)
        fprintf(stderr, "cannot prepare %s\n", dir);
    return dir;
}
