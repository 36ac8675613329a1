#include "report.h"

/* The powers of ten, then the powers of sixteen, each largest first down
   to 1: the digits come from repeated subtraction. Cortex-M0 has no
   divide instruction, and v / 10 would link the C library's division
   routines for a few numbers a line. */
static const uint32_t powers[18] = {
    1000000000u, 100000000u, 10000000u, 1000000u, 100000u, 10000u, 1000u, 100u, 10u, 1u,
    1u << 28, 1u << 24, 1u << 20, 1u << 16, 1u << 12, 1u << 8, 1u << 4, 1u,
};
/* Where the powers of sixteen start. */
#define HEX 10u

/* Writes the digits of `v`: in hex, every digit (8); in decimal, without
   leading zeros (0 is "0"). One routine for every number of a line. */
static void __attribute__((noinline)) put_digits(uint32_t v, int hex) {
  const uint32_t *p = hex ? &powers[HEX] : powers;
  int started = hex;
  for (;; p++) {
    unsigned digit = 0u;
    /* At most 15 rounds: v is below 16 times the power here (10 times
       in decimal), except for 10^9, where v <= UINT32_MAX < 5 * 10^9. */
    while (v >= *p) {
      v -= *p;
      digit++;
    }
    started |= digit != 0u || *p == 1u;
    if (started) {
      char c = (char)(digit < 10u ? '0' + digit : 'a' - 10u + digit);
      host_write(&c, 1u);
    }
    /* Both runs of powers end in 1. */
    if (*p == 1u) {
      return;
    }
  }
}

void put_decimal(const char *label, size_t len, int negative, uint32_t magnitude) {
  host_write(label, len);
  if (negative) {
    PUT("-");
  }
  put_digits(magnitude, 0);
}

/* Writes `label` (a string literal), then `v` in decimal (its magnitude
   in uint32_t: exact for INT32_MIN too). */
#define PUT_INT(label, v) PUT_DECIMAL(label, (v) < 0, (v) < 0 ? 0u - (uint32_t)(v) : (uint32_t)(v))

/* The status names after their "fault-" prefix, in the order of
   put_reading's numbers, each with the line's end: one string, no table
   of pointers. */
static const char names[] = "ok\nbelow-range\nabove-range\nno-target\n"
                            "counts\ncompanion\nshift\nratio\nreference\nreference-low\nfrozen\n"
                            "temperature-domain\ntemperature-missing\nout-of-reach\n";

void put_reading(uint32_t index, int32_t value, int has_secondary, int32_t secondary,
                 int64_t q40, lc_status_t status, lc_fault_t fault) {
  PUT_DECIMAL("reading ", 0, index);
  PUT_INT(" value ", value);
  /* Either branch ends with the next label (one write less without a
     secondary value). */
  if (has_secondary) {
    PUT_INT(" secondary ", secondary);
    PUT(" shift ");
  } else {
    PUT(" secondary - shift ");
  }
  /* Two 32-bit halves: the M0 has no 64-bit shift instruction. */
  put_digits((uint32_t)((uint64_t)q40 >> 32), 1);
  put_digits((uint32_t)q40, 1);
  PUT(" status ");
  unsigned number = (unsigned)status;
  if (status == LC_STATUS_SENSOR_FAULT) {
    PUT("fault-");
    /* The fault code's high nibble is its group: counts, companion,
       shift, ratio by group (4 to 7); reference and reference-low (0x40,
       0x41: 8, 9), frozen, the two temperature faults and out-of-reach
       (0x50 to 0x53: 10 to 13) by code. */
    unsigned group = (unsigned)fault >> 4, low = (unsigned)fault & 0xFu;
    number = group < 4u ? 4u + group : 2u * group + low;
  }
  /* The name is the part of names after `number` line ends, up to and
     including the next (an unknown code: the last name). */
  if (number > 13u) {
    number = 13u;
  }
  const char *at = names;
  for (; number != 0u; at++) {
    if (*at == '\n') {
      number--;
    }
  }
  const char *start = at;
  while (*at++ != '\n') {
  }
  host_write(start, (size_t)(at - start));
}
