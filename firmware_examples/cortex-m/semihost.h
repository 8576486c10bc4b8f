/*
 * semihost.h - console output and exit through Arm semihosting (the debugger or emulator
 * services a BKPT 0xAB; qemu-system-arm does with -semihosting). Output is buffered and
 * written in lines of up to SEMIHOST_BUFFER_BYTES.
 */
#ifndef SEMIHOST_H
#define SEMIHOST_H

#include <stdint.h>

#define SEMIHOST_BUFFER_BYTES 256u

void semihost_put_str(const char *s);
void semihost_put_char(char c);
/* Decimal integer, no padding. */
void semihost_put_int(int64_t v);
void semihost_put_uint(uint64_t v);
/* Write what is buffered. */
void semihost_flush(void);
/* Flush and end the program: qemu exits with `code` as its own exit status. Never returns. */
void semihost_exit(int32_t code) __attribute__((noreturn));

#endif /* SEMIHOST_H */
