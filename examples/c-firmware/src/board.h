/* What the example firmwares need from the board: output to the host
   over semihosting (the emulator's, or a debug probe's), the exit, and
   the peak-stack report. In a product, replace host_write with a UART or
   RTT logger. */
#ifndef LC_EXAMPLE_BOARD_H
#define LC_EXAMPLE_BOARD_H

#include <stddef.h>
#include <stdint.h>

/* Opens the host's standard output. */
void host_open(void);
/* Writes `len` bytes. A write the host refuses (or one to a handle whose
   open failed) ends the program with a failure status. Semihosting needs
   a debugger or the emulator: without one, its `bkpt` faults (a product
   replaces host_write). */
void host_write(const char *bytes, size_t len);
/* Writes the `len` bytes of `why` and ends the program with a failure
   status. */
void host_fail(const char *why, size_t len) __attribute__((noreturn));
/* host_fail with a string literal (its length known at compile time). */
#define FAIL(literal) host_fail((literal), sizeof(literal) - 1u)
/* Writes `stack <bytes>` (the peak stack) and ends the program with a
   success status. */
void host_finish(void) __attribute__((noreturn));
/* The deepest the stack has been since reset, bytes, start-up included:
   the reset handler paints the stack with 0xCCCCCCCC before main. */
uint32_t stack_peak_bytes(void);

#endif
