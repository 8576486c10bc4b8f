/* semihost.c - buffered console output and exit over Arm semihosting. */
#include "semihost.h"

/* Operation numbers: Arm "Semihosting for AArch32 and AArch64", version 2.0. */
#define SYS_WRITE0         0x04u
#define SYS_EXIT_EXTENDED  0x20u
#define ADP_STOPPED_APPLICATION_EXIT 0x20026u

static char sh_buffer[SEMIHOST_BUFFER_BYTES + 1u]; /* + 1 for the terminating zero */
static uint32_t sh_used;

static uint32_t semihost_call(uint32_t op, const void *arg)
{
    register uint32_t r0 __asm__("r0") = op;
    register const void *r1 __asm__("r1") = arg;
    __asm__ volatile("bkpt 0xAB" : "+r"(r0) : "r"(r1) : "memory");
    return r0;
}

void semihost_flush(void)
{
    if (sh_used > 0u) {
        sh_buffer[sh_used] = '\0';
        (void)semihost_call(SYS_WRITE0, sh_buffer);
        sh_used = 0u;
    }
}

void semihost_put_char(char c)
{
    if (c == '\0') {
        return; /* SYS_WRITE0 cannot carry a zero byte */
    }
    if (sh_used >= SEMIHOST_BUFFER_BYTES) {
        semihost_flush();
    }
    sh_buffer[sh_used++] = c;
    if (c == '\n') {
        semihost_flush();
    }
}

void semihost_put_str(const char *s)
{
    while (*s != '\0') {
        semihost_put_char(*s++);
    }
}

void semihost_put_uint(uint64_t v)
{
    char digits[20];
    uint32_t n = 0u;
    do {
        digits[n++] = (char)('0' + (char)(v % 10u));
        v /= 10u;
    } while (v != 0u);
    while (n > 0u) {
        semihost_put_char(digits[--n]);
    }
}

void semihost_put_int(int64_t v)
{
    if (v < 0) {
        semihost_put_char('-');
        /* -(v + 1) + 1 avoids negating INT64_MIN */
        semihost_put_uint((uint64_t)(-(v + 1)) + 1u);
    } else {
        semihost_put_uint((uint64_t)v);
    }
}

void semihost_exit(int32_t code)
{
    uint32_t block[2];
    semihost_flush();
    block[0] = ADP_STOPPED_APPLICATION_EXIT;
    block[1] = (uint32_t)code;
    (void)semihost_call(SYS_EXIT_EXTENDED, block);
    for (;;) {
        /* not reached under a semihosting host */
    }
}
