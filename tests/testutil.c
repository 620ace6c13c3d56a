#include "testutil.h"
#include <stdint.h>
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

/* CRC-32 of PNG chunks (ISO 3309 polynomial, bitwise). */
static uint32_t crc32_of(const unsigned char *p, size_t n)
{
    uint32_t c = 0xffffffffu;
    for (size_t i = 0; i < n; i++) {
        c ^= p[i];
        for (int k = 0; k < 8; k++)
            c = (c >> 1) ^ (0xedb88320u & (0u - (c & 1u)));
    }
    return c ^ 0xffffffffu;
}

static void put32(unsigned char *p, uint32_t v)
{
    p[0] = (unsigned char)(v >> 24), p[1] = (unsigned char)(v >> 16);
    p[2] = (unsigned char)(v >> 8), p[3] = (unsigned char)v;
}

void pp_test_write_png_header(const char *path, unsigned w, unsigned h)
{
    unsigned char b[64] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'};
    size_t n = 8;
    put32(b + n, 13), memcpy(b + n + 4, "IHDR", 4);
    put32(b + n + 8, w), put32(b + n + 12, h);
    b[n + 16] = 8, b[n + 17] = 0, b[n + 18] = b[n + 19] = b[n + 20] = 0;
    put32(b + n + 21, crc32_of(b + n + 4, 17));
    n += 25;
    put32(b + n, 2), memcpy(b + n + 4, "IDAT", 4), b[n + 8] = 0x78, b[n + 9] = 0x9c;
    put32(b + n + 10, crc32_of(b + n + 4, 6));
    n += 14;
    put32(b + n, 0), memcpy(b + n + 4, "IEND", 4), put32(b + n + 8, crc32_of(b + n + 4, 4));
    n += 12;
    FILE *fp = fopen(path, "wb");
    if (fp) {
        fwrite(b, 1, n, fp);
        fclose(fp);
    }
}

char *pp_test_slurp(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *b = malloc((size_t)n + 1);
    if (b && fread(b, 1, (size_t)n, f) != (size_t)n) {
        free(b);
        b = NULL;
    }
    if (b)
        b[n] = '\0';
    fclose(f);
    return b;
}
