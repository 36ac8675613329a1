#include "report.h"

/* Powers of ten, largest first: the decimal digits come from repeated
   subtraction. Cortex-M0 has no divide instruction, and v / 10 would
   link the C library's division routines for a few numbers a line. */
static const uint32_t powers_of_ten[10] = {
    1000000000u, 100000000u, 10000000u, 1000000u, 100000u, 10000u, 1000u, 100u, 10u, 1u,
};

/* Writes one byte. */
static void put_byte(char c) { host_write(&c, 1u); }

/* Writes '-' when `negative`, then `magnitude` in decimal. */
static void put_decimal(int negative, uint32_t magnitude) {
  if (negative) {
    PUT("-");
  }
  int started = 0;
  for (unsigned i = 0; i < 10u; i++) {
    uint32_t p = powers_of_ten[i];
    char digit = '0';
    /* At most 9 rounds (4 for 10^9): magnitude < 10 * p here, except
       for p = 10^9, where magnitude <= UINT32_MAX < 5 * 10^9. */
    while (magnitude >= p) {
      magnitude -= p;
      digit++;
    }
    /* No leading zeros; the last digit always (0 is "0"). */
    started |= digit != '0' || p == 1u;
    if (started) {
      put_byte(digit);
    }
  }
}

void put_uint(uint32_t v) { put_decimal(0, v); }

void put_int(int32_t v) {
  /* The magnitude in uint32_t: exact for INT32_MIN too. */
  put_decimal(v < 0, v < 0 ? 0u - (uint32_t)v : (uint32_t)v);
}

void put_hex64(int64_t v) {
  /* Two 32-bit halves: the M0 has no 64-bit shift instruction. */
  uint32_t word = (uint32_t)((uint64_t)v >> 32);
  for (unsigned i = 0; i < 16u; i++) {
    if (i == 8u) {
      word = (uint32_t)v;
    }
    /* The top nibble (< 16), then the next one up. */
    unsigned nibble = word >> 28;
    word <<= 4;
    put_byte((char)(nibble < 10u ? '0' + nibble : 'a' - 10u + nibble));
  }
}

/* The status names after their "fault-" prefix, in the order of
   put_status's numbers, each with the line's end: one string, no table
   of pointers. */
static const char names[] = "ok\nbelow-range\nabove-range\nno-target\n"
                            "counts\ncompanion\nshift\nratio\nreference\nreference-low\nfrozen\n"
                            "temperature-domain\ntemperature-missing\nout-of-reach\n";

void put_status(lc_status_t status, lc_fault_t fault) {
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

void __attribute__((noinline)) put_reading(uint32_t index, int32_t value, int has_secondary, int32_t secondary,
                 int64_t q40, lc_status_t status, lc_fault_t fault) {
  PUT("reading ");
  put_uint(index);
  PUT(" value ");
  put_int(value);
  PUT(" secondary ");
  if (has_secondary) {
    put_int(secondary);
  } else {
    PUT("-");
  }
  PUT(" shift ");
  put_hex64(q40);
  PUT(" status ");
  put_status(status, fault);
}
