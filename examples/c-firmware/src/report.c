#include "report.h"

void line_clear(line_t *line) { line->len = 0; }

void line_text(line_t *line, const char *text) {
  for (; *text != '\0'; text++) {
    if (line->len < LINE_CAPACITY) {
      line->buf[line->len++] = *text;
    }
  }
}

void line_uint(line_t *line, uint32_t v) {
  char digits[11];
  size_t start = sizeof digits - 1;
  digits[start] = '\0';
  do {
    digits[--start] = (char)('0' + v % 10u);
    v /= 10u;
  } while (v != 0u);
  line_text(line, &digits[start]);
}

void line_int(line_t *line, int32_t v) {
  if (v < 0) {
    line_text(line, "-");
    /* The magnitude in uint32_t: exact for INT32_MIN too. */
    line_uint(line, 0u - (uint32_t)v);
  } else {
    line_uint(line, (uint32_t)v);
  }
}

void line_hex64(line_t *line, int64_t v) {
  static const char hex[] = "0123456789abcdef";
  uint64_t u = (uint64_t)v;
  char digits[17];
  for (int i = 0; i < 16; i++) {
    digits[i] = hex[(u >> (4 * (15 - i))) & 0xFu];
  }
  digits[16] = '\0';
  line_text(line, digits);
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

void line_reading(line_t *line, uint32_t index, int32_t value, int has_secondary,
                  int32_t secondary, int64_t q40, lc_status_t status, lc_fault_t fault) {
  line_clear(line);
  line_text(line, "reading ");
  line_uint(line, index);
  line_text(line, " value ");
  line_int(line, value);
  line_text(line, " secondary ");
  if (has_secondary) {
    line_int(line, secondary);
  } else {
    line_text(line, "-");
  }
  line_text(line, " shift ");
  line_hex64(line, q40);
  line_text(line, " status ");
  line_text(line, status_name(status, fault));
  line_text(line, "\n");
}
