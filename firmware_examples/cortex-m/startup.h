/* startup.h - what the start-up code offers to the application. */
#ifndef STARTUP_H
#define STARTUP_H

#include <stdint.h>

#define FW_STACK_PAINT 0xA5C3A5C3u
/* Exit status after an unexpected exception (HardFault and friends). */
#define FW_EXIT_FAULT 3

/* Bytes of the main stack touched since reset (high-water mark of the painted region). */
uint32_t fw_stack_used_bytes(void);

#endif /* STARTUP_H */
