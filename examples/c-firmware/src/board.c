/* Start-up, vector table and semihosting for the Cortex-M0 of QEMU's
   microbit machine, without a C library. */
#include <stdint.h>

#include "board.h"
#include "report.h"

extern uint32_t _stack_start, _stack_end, _sidata, _sdata, _edata, _sbss, _ebss;
int main(void);

/* ARM semihosting: operation in r0, argument block in r1, `bkpt 0xAB`. */
static int32_t semihost(int32_t op, const void *arg) {
  register int32_t r0 __asm__("r0") = op;
  register const void *r1 __asm__("r1") = arg;
  __asm__ volatile("bkpt 0xAB" : "+r"(r0) : "r"(r1) : "memory");
  return r0;
}

#define SYS_OPEN 0x01
#define SYS_WRITE 0x05
#define SYS_EXIT 0x18
#define ADP_STOPPED_APPLICATION_EXIT 0x20026
#define ADP_STOPPED_RUN_TIME_ERROR 0x20023

/* Ends the program with `reason`: the emulator exits with status 0 for
   ADP_STOPPED_APPLICATION_EXIT, 1 otherwise. */
static void __attribute__((noreturn)) exit_with(uintptr_t reason) {
  semihost(SYS_EXIT, (const void *)reason);
  for (;;) {
    __asm__ volatile("wfi");
  }
}

/* Ends the program with a failure status. Also the handler of every
   fault and unexpected interrupt (vector_table). */
static void __attribute__((noreturn)) exit_failure(void) { exit_with(ADP_STOPPED_RUN_TIME_ERROR); }

/* The handle the host gave for its standard output (host_open). */
static int32_t out_handle;

void host_open(void) {
  /* ":tt" opened for writing (mode 4) is the host's standard output: the
     name, the mode and the name's length, in flash. */
  static const uintptr_t args[3] = {(uintptr_t)":tt", 4u, 3u};
  out_handle = semihost(SYS_OPEN, args);
}

void host_write(const char *bytes, size_t len) {
  const uint32_t args[3] = {(uint32_t)out_handle, (uint32_t)(uintptr_t)bytes, (uint32_t)len};
  /* Returns the number of bytes not written (a failed open's handle, -1,
     is refused). */
  if (semihost(SYS_WRITE, args) != 0) {
    exit_failure();
  }
}

void host_fail(const char *why, size_t len) {
  host_write(why, len);
  exit_failure();
}

uint32_t stack_peak_bytes(void) {
  const volatile uint32_t *at = &_stack_end;
  const uint32_t *top = &_stack_start;
  while (at < top && *at == 0xCCCCCCCCu) {
    at++;
  }
  return (uint32_t)((uintptr_t)top - (uintptr_t)at);
}

void host_finish(void) {
  PUT_DECIMAL("stack ", 0, stack_peak_bytes());
  PUT("\n");
  exit_with(ADP_STOPPED_APPLICATION_EXIT);
}

/* After the paint: initialised data, zeroed data, main. */
void __attribute__((noreturn, used)) start(void) {
  uint32_t *src = &_sidata;
  for (uint32_t *dst = &_sdata; dst < &_edata;) {
    *dst++ = *src++;
  }
  for (uint32_t *dst = &_sbss; dst < &_ebss;) {
    *dst++ = 0u;
  }
  main();
  exit_failure();
}

/* Reset: paints the whole stack with 0xCCCCCCCC (before anything is
   pushed, so the peak covers start-up), then start(). */
void __attribute__((naked, noreturn)) Reset_Handler(void) {
  __asm__ volatile(".syntax unified\n"
                   "ldr r0, =_stack_end\n"
                   "ldr r1, =_stack_start\n"
                   "ldr r2, =0xCCCCCCCC\n"
                   "1:\n"
                   "cmp r0, r1\n"
                   "bhs 2f\n"
                   "str r2, [r0]\n"
                   "adds r0, #4\n"
                   "b 1b\n"
                   "2:\n"
                   "bl start\n"
                   ".ltorg\n");
}

/* Initial stack pointer, reset, 14 system exceptions and the M0's 32
   interrupts (the size of cortex-m-rt's table without a device crate). */
__attribute__((section(".vector_table"), used)) static const uintptr_t vector_table[48] = {
    (uintptr_t)&_stack_start, (uintptr_t)Reset_Handler,
    [2 ... 47] = (uintptr_t)exit_failure,
};
