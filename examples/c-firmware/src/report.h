/* One text line per reading, the line format of the Rust unit firmwares
   (examples/unit-firmware/src/report.rs), without printf:

     reading <i> value <v> secondary <v|-> shift <Q23.40 as 16 hex digits> status <name>

   The host test (tests/c_firmware.rs) compares the lines with the Rust
   firmware's and the host's, byte for byte. */
#ifndef LC_EXAMPLE_REPORT_H
#define LC_EXAMPLE_REPORT_H

#include <stddef.h>
#include <stdint.h>

#include "lc_core.h"

/* Room for the longest line. */
#define LINE_CAPACITY 112

typedef struct line {
  char buf[LINE_CAPACITY];
  size_t len;
} line_t;

void line_clear(line_t *line);
void line_text(line_t *line, const char *text);
void line_uint(line_t *line, uint32_t v);
void line_int(line_t *line, int32_t v);
void line_hex64(line_t *line, int64_t v);

/* The line of reading number `index`: its value, its secondary value
   when `has_secondary`, the raw Q23.40 value it came from and its status
   (with the fault's group on a sensor fault). */
void line_reading(line_t *line, uint32_t index, int32_t value, int has_secondary,
                  int32_t secondary, int64_t q40, lc_status_t status, lc_fault_t fault);

/* A short name for each status: "ok", "below-range", "above-range",
   "no-target", "fault-counts", "fault-companion", "fault-shift",
   "fault-ratio", "fault-reference". */
const char *status_name(lc_status_t status, lc_fault_t fault);

#endif
