#include "report.h"

void put_uint(uint32_t v) {
  char digits[10];
  unsigned start = sizeof digits;
  do {
    digits[--start] = (char)('0' + v % 10u);
    v /= 10u;
  } while (v != 0u);
  host_write(&digits[start], sizeof digits - start);
}

void put_int(int32_t v) {
  if (v < 0) {
    PUT("-");
  }
  /* The magnitude in uint32_t: exact for INT32_MIN too. */
  put_uint(v < 0 ? 0u - (uint32_t)v : (uint32_t)v);
}

void put_hex64(int64_t v) {
  char digits[16];
  for (unsigned i = 0; i < 16u; i++) {
    /* A nibble (< 16), from the most significant down. */
    unsigned nibble = (unsigned)(v >> (4u * (15u - i))) & 0xFu;
    digits[i] = (char)(nibble < 10u ? '0' + nibble : 'a' - 10u + nibble);
  }
  host_write(digits, sizeof digits);
}

const char *status_name(lc_status_t status, lc_fault_t fault) {
  switch (status) {
  case LC_STATUS_OK:
    return "ok";
  case LC_STATUS_BELOW_RANGE:
    return "below-range";
  case LC_STATUS_ABOVE_RANGE:
    return "above-range";
  case LC_STATUS_NO_TARGET:
    return "no-target";
  default:
    break;
  }
  /* The plausibility faults by code; the others by their group, the fault
     code's high nibble. */
  switch (fault) {
  case LC_FAULT_REFERENCE_LOW:
    return "fault-reference-low";
  case LC_FAULT_FROZEN:
    return "fault-frozen";
  case LC_FAULT_TEMPERATURE_OUT_OF_DOMAIN:
    return "fault-temperature-domain";
  case LC_FAULT_TEMPERATURE_MISSING:
    return "fault-temperature-missing";
  case LC_FAULT_OUT_OF_REACH:
    return "fault-out-of-reach";
  default:
    break;
  }
  switch (fault >> 4) {
  case 0x0:
    return "fault-counts";
  case 0x1:
    return "fault-companion";
  case 0x2:
    return "fault-shift";
  case 0x3:
    return "fault-ratio";
  default:
    return "fault-reference";
  }
}

void put_reading(uint32_t index, int32_t value, int has_secondary, int32_t secondary,
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
  host_puts(status_name(status, fault));
  PUT("\n");
}
