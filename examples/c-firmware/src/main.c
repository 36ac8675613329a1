/* A whole unit firmware in C over lc-core's C API: the calibration image
   in flash, validated once, a reader built from it, then one reading per
   input. Built three times (build.sh), one product each:
   -DUNIT_PROXIMITY, -DUNIT_LEVEL or -DUNIT_METAL.

   Copy this file to start a product. The steps:

   1. The image. `lc-host calibrate` writes one image per unit; the
      end-of-line rig writes it into the unit's flash. Here it sits in a
      section of its own, .calibration, at the start of the last 4 KiB
      page (link.ld, src/image.S), 4-byte aligned.
   2. Validate and build the reader, in one call:
      lc_proximity_reader_open (lc_level_reader_open, lc_metal_reader_open)
      checks the magic, format version, length, CRC-32, every field and
      every curve segment, in place, and the image's kind (the image stays in flash,
      and only this kind's checks are linked in), then builds the reader
      in storage of its own (here main's frame; a static works as well),
      borrowing the curve from flash. A unit whose image fails must not
      read. (lc_image_validate_proximity then lc_proximity_reader_init do
      the same in two steps, with an lc_image_t between them for
      lc_image_info; lc_image_validate and lc_reader_init take any kind.)
   3. Memory. main's frame holds the reader, one lc_input_t and one
      reading (start and read_all below are inlined into it); each
      reading's line is written from a frame of its own (report, kept
      out of line), so the line's working memory is on the stack only
      while a line is written, not while lc-core validates or reads.
   4. Read. Per gate, the timer capture gives a count pair and the NTC a
      temperature; lc_*_read turns them into a reading with a status. A
      sensor fault is a status, never an error code. Here the inputs come
      from a script (script.c: one row of a few bytes a gate, turned into
      an lc_input_t per reading, as the firmware would do with its capture
      registers) and the readings go to the host over
      semihosting, in the Rust unit firmwares' line format.

   LC_CHECK_LAYOUT() (lc_core.h) checks at run time that the header and
   the library are from one build; this example leaves it out, as the
   Rust firmwares have no such call (about 150 bytes of flash).

   Not a safety-rated component: a reading that protects people or
   machines needs a safety function designed to the applicable standards. */
#include <stddef.h>
#include <stdint.h>

#include "board.h"
#include "lc_core.h"
#include "report.h"
#include "script.h"

/* The image's bounds (src/image.S). */
extern const uint8_t lc_unit_image[], lc_unit_image_end[];

/* The image's length as the linker placed it (a flash page may be
   longer: the image's own length field decides). */
#define IMAGE_LEN ((size_t)(lc_unit_image_end - lc_unit_image))

#if defined(UNIT_PROXIMITY)
typedef lc_proximity_reader_t reader_t;

/* Validates this unit's image and builds its reader; the unit stops when
   the image is refused. */
static void start(reader_t *reader) {
  if (lc_proximity_reader_open(reader, lc_unit_image, IMAGE_LEN) != LC_OK) {
    FAIL("calibration image refused\n");
  }
}

/* The line of reading number `i` (report.h), from a frame of its own
   (step 3). */
static void __attribute__((noinline)) report(uint32_t i, const lc_proximity_reading_t *r) {
  put_reading(i, r->gap, 0, 0, r->shift_q40, r->status, r->fault);
}

/* One reading per scripted gate (step 4); the unit stops on an error
   (a reading's sensor fault is its status, not an error). */
static void read_all(reader_t *reader) {
  for (size_t i = 0; i < script_proximity_len; i++) {
    lc_input_t in;
    proximity_input(&script_proximity[i], &in);
    lc_proximity_reading_t r;
    if (lc_proximity_read(reader, &in, &r) != LC_OK) {
      FAIL("bad input\n");
    }
    report((uint32_t)i, &r);
  }
}
#elif defined(UNIT_LEVEL)
typedef lc_level_reader_t reader_t;

static void start(reader_t *reader) {
  if (lc_level_reader_open(reader, lc_unit_image, IMAGE_LEN) != LC_OK) {
    FAIL("calibration image refused\n");
  }
}

static void __attribute__((noinline)) report(uint32_t i, const lc_level_reading_t *r) {
  put_reading(i, r->level, r->has_volume, r->volume, r->axis_q40, r->status, r->fault);
}

static void read_all(reader_t *reader) {
  for (size_t i = 0; i < script_level_len; i++) {
    lc_input_t in;
    level_input(&script_level[i], &in);
    lc_level_reading_t r;
    if (lc_level_read(reader, &in, &r) != LC_OK) {
      FAIL("bad input\n");
    }
    report((uint32_t)i, &r);
  }
}
#elif defined(UNIT_METAL)
typedef lc_metal_reader_t reader_t;

static void start(reader_t *reader) {
  if (lc_metal_reader_open(reader, lc_unit_image, IMAGE_LEN) != LC_OK) {
    FAIL("calibration image refused\n");
  }
}

static void __attribute__((noinline)) report(uint32_t i, const lc_metal_reading_t *r) {
  put_reading(i, (int32_t)r->metal_class, r->has_ring_drop, r->ring_drop, r->delta_q40, r->status,
              r->fault);
}

static void read_all(reader_t *reader) {
  for (size_t i = 0; i < script_metal_len; i++) {
    lc_input_t in;
    metal_input(&script_metal[i], &in);
    lc_metal_reading_t r;
    if (lc_metal_read(reader, &in, &r) != LC_OK) {
      FAIL("bad input\n");
    }
    report((uint32_t)i, &r);
  }
}
#else
#error "build with -DUNIT_PROXIMITY, -DUNIT_LEVEL or -DUNIT_METAL"
#endif

int main(void) {
  host_open();
  PUT("boot\n");
  reader_t reader;
  start(&reader);
  read_all(&reader);
  host_finish();
}
