/* The C API on the host, under AddressSanitizer and
   UndefinedBehaviorSanitizer (tests/host_c.rs builds and runs it):
   every entry point, with good and bad images, good and bad arguments,
   good and bad inputs.

     host_test PROXIMITY.lcim LEVEL.lcim METAL.lcim

   Prints the readings of the scripted inputs (examples/c-firmware's
   script.c, the Rust unit firmwares' inputs) in the firmwares' line
   format, each image's under "== <kind>"; tests/host_c.rs compares them
   with the Rust readers'. Exit status 0 when every check passed. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lc_core.h"
#include "report.h"
#include "script.h"

static int failures;

#define CHECK(cond)                                                            \
  do {                                                                         \
    if (!(cond)) {                                                             \
      fprintf(stderr, "%s:%d: check failed: %s\n", __FILE__, __LINE__, #cond); \
      failures++;                                                              \
    }                                                                          \
  } while (0)

#define EXPECT(call, code)                                                     \
  do {                                                                         \
    lc_error_t got_ = (call);                                                  \
    if (got_ != (code)) {                                                      \
      fprintf(stderr, "%s:%d: %s returned %u, expected %s (%u)\n", __FILE__,   \
              __LINE__, #call, (unsigned)got_, #code, (unsigned)(code));       \
      failures++;                                                              \
    }                                                                          \
  } while (0)

/* An image file in malloc'ed memory (aligned for any type). */
static uint8_t *load(const char *path, size_t *len) {
  FILE *f = fopen(path, "rb");
  if (f == NULL) {
    perror(path);
    exit(2);
  }
  uint8_t *buf = malloc(8192);
  *len = fread(buf, 1, 8192, f);
  fclose(f);
  return buf;
}

/* CRC-32/ISO-HDLC, bitwise: to re-seal an edited image. */
static uint32_t crc32(const uint8_t *p, size_t n) {
  uint32_t c = 0xFFFFFFFFu;
  for (size_t i = 0; i < n; i++) {
    c ^= p[i];
    for (int k = 0; k < 8; k++) {
      c = (c >> 1) ^ (0xEDB88320u & (0u - (c & 1u)));
    }
  }
  return ~c;
}

static void reseal(uint8_t *img, size_t len) {
  uint32_t c = crc32(img, len - 4);
  for (int i = 0; i < 4; i++) {
    img[len - 4 + i] = (uint8_t)(c >> (8 * i));
  }
}

/* The image's stated length (bytes 6-7, little-endian). */
static size_t stated_len(const uint8_t *img) { return (size_t)img[6] | ((size_t)img[7] << 8); }

/* The firmwares' output (board.h), here the standard output: report.c
   writes each reading's line through it. */
void host_write(const char *bytes, size_t len) { fwrite(bytes, 1, len, stdout); }

void host_puts(const char *s) { fputs(s, stdout); }

/* The scripted inputs through the typed reader and the generic one: the
   same readings, printed once. */
static void read_script(lc_kind_t kind, const lc_image_t *image, const lc_input_t *inputs,
                        size_t n) {
  lc_proximity_reader_t prox;
  lc_level_reader_t level;
  lc_metal_reader_t metal;
  lc_reader_t any;
  EXPECT(lc_reader_init(&any, image), LC_OK);
  switch (kind) {
  case LC_KIND_PROXIMITY:
    EXPECT(lc_proximity_reader_init(&prox, image), LC_OK);
    break;
  case LC_KIND_LEVEL:
    EXPECT(lc_level_reader_init(&level, image), LC_OK);
    break;
  default:
    EXPECT(lc_metal_reader_init(&metal, image), LC_OK);
    break;
  }
  for (size_t i = 0; i < n; i++) {
    lc_reading_t r;
    EXPECT(lc_reader_read(&any, &inputs[i], &r), LC_OK);
    CHECK(r.kind == kind);
    if (kind == LC_KIND_PROXIMITY) {
      lc_proximity_reading_t p;
      EXPECT(lc_proximity_read(&prox, &inputs[i], &p), LC_OK);
      CHECK(p.gap == r.value && p.shift_q40 == r.q40 && p.status == r.status &&
            p.fault == r.fault && !r.has_secondary);
      put_reading((uint32_t)i, p.gap, 0, 0, p.shift_q40, p.status, p.fault);
    } else if (kind == LC_KIND_LEVEL) {
      lc_level_reading_t l;
      EXPECT(lc_level_read(&level, &inputs[i], &l), LC_OK);
      CHECK(l.level == r.value && l.axis_q40 == r.q40 && l.status == r.status &&
            l.fault == r.fault && l.has_volume == r.has_secondary &&
            (!l.has_volume || l.volume == r.secondary));
      put_reading((uint32_t)i, l.level, l.has_volume, l.volume, l.axis_q40, l.status, l.fault);
    } else {
      lc_metal_reading_t m;
      EXPECT(lc_metal_read(&metal, &inputs[i], &m), LC_OK);
      CHECK((int32_t)m.metal_class == r.value && m.delta_q40 == r.q40 &&
            m.status == r.status && m.fault == r.fault && m.has_ring_drop == r.has_secondary &&
            (!m.has_ring_drop || m.ring_drop == r.secondary));
      put_reading((uint32_t)i, (int32_t)m.metal_class, m.has_ring_drop, m.ring_drop,
                  m.delta_q40, m.status, m.fault);
    }
    CHECK(r.status == LC_STATUS_SENSOR_FAULT ? r.fault != LC_FAULT_NONE
                                              : r.fault == LC_FAULT_NONE);
  }
}

/* Every prefix and every one-byte corruption of a good image is refused
   (never read out of bounds: AddressSanitizer watches). */
static void mangled_images(const uint8_t *good, size_t len) {
  uint8_t *copy = malloc(len);
  lc_image_t image;
  for (size_t n = 0; n < len; n++) {
    memcpy(copy, good, n);
    /* Exactly n bytes: a read past them is a heap overflow. */
    uint8_t *exact = malloc(n == 0 ? 1 : n);
    memcpy(exact, good, n);
    CHECK(lc_image_validate(&image, exact, n) != LC_OK);
    free(exact);
  }
  for (size_t i = 0; i < len; i++) {
    memcpy(copy, good, len);
    copy[i] ^= 0x5A;
    lc_error_t e = lc_image_validate(&image, copy, len);
    CHECK(e != LC_OK);
    /* A refused image leaves its storage unusable. */
    if (e != LC_OK) {
      lc_proximity_reader_t r;
      EXPECT(lc_proximity_reader_init(&r, &image), LC_ERR_NOT_INITIALISED);
    }
  }
  free(copy);
}

/* Edits of a good image, each refused with its own code. */
static void bad_images(const uint8_t *good, size_t file_len) {
  size_t len = stated_len(good);
  uint8_t *img = malloc(len + 64);
  lc_image_t image;

  memcpy(img, good, len);
  img[0] = 'X';
  EXPECT(lc_image_validate(&image, img, len), LC_ERR_IMAGE_BAD_MAGIC);

  memcpy(img, good, len);
  img[4] = 1;
  img[5] = 0;
  EXPECT(lc_image_validate(&image, img, len), LC_ERR_IMAGE_OLD_FORMAT);
  img[4] = 7;
  EXPECT(lc_image_validate(&image, img, len), LC_ERR_IMAGE_UNKNOWN_VERSION);

  memcpy(img, good, len);
  img[6] = (uint8_t)(img[6] + 4);
  EXPECT(lc_image_validate(&image, img, len + 4), LC_ERR_IMAGE_LENGTH_MISMATCH);

  memcpy(img, good, len);
  img[20] ^= 1;
  EXPECT(lc_image_validate(&image, img, len), LC_ERR_IMAGE_BAD_CRC);

  memcpy(img, good, len);
  img[8] = 9; /* reader kind */
  reseal(img, len);
  EXPECT(lc_image_validate(&image, img, len), LC_ERR_IMAGE_FIELD_READER_KIND);

  memcpy(img, good, len);
  img[12] = 0x01; /* the serial's first character */
  reseal(img, len);
  EXPECT(lc_image_validate(&image, img, len), LC_ERR_IMAGE_FIELD_SERIAL);

  EXPECT(lc_image_validate(&image, good, 0), LC_ERR_IMAGE_TRUNCATED);
  EXPECT(lc_image_validate(&image, good, 10), LC_ERR_IMAGE_TRUNCATED);
  EXPECT(lc_image_validate(&image, good, len - 1), LC_ERR_IMAGE_TRUNCATED);

  /* One byte off its 4-byte alignment. */
  memcpy(img + 1, good, len);
  EXPECT(lc_image_validate(&image, img + 1, len), LC_ERR_IMAGE_MISALIGNED);

  /* In a longer buffer (a flash page): the stated length decides. */
  memcpy(img, good, len);
  memset(img + len, 0xFF, 64);
  EXPECT(lc_image_validate(&image, img, len + 64), LC_OK);
  (void)file_len;

  free(img);
}

/* Bad arguments and bad inputs for every entry point. */
static void bad_arguments(const lc_image_t *prox_image, const lc_image_t *level_image,
                          const lc_image_t *metal_image, const uint8_t *bytes, size_t len) {
  lc_image_t image;
  lc_image_info_t info;
  /* Storage one word off its alignment, inside a larger aligned block. */
  static uint64_t block[64];
  void *misaligned = (unsigned char *)block + 4;

  EXPECT(lc_image_validate(NULL, bytes, len), LC_ERR_NULL_POINTER);
  EXPECT(lc_image_validate(&image, NULL, len), LC_ERR_NULL_POINTER);
  EXPECT(lc_image_info(&image, &info), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_image_validate((lc_image_t *)misaligned, bytes, len), LC_ERR_MISALIGNED_ARGUMENT);
  EXPECT(lc_image_validate(&image, bytes, SIZE_MAX), LC_ERR_BAD_LENGTH);
  EXPECT(lc_image_info(NULL, &info), LC_ERR_NULL_POINTER);
  EXPECT(lc_image_info(prox_image, NULL), LC_ERR_NULL_POINTER);

  lc_image_t zeroed;
  memset(&zeroed, 0, sizeof zeroed);
  lc_proximity_reader_t prox;
  lc_level_reader_t level;
  lc_metal_reader_t metal;
  lc_reader_t any;
  EXPECT(lc_image_info(&zeroed, &info), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_proximity_reader_init(&prox, &zeroed), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_level_reader_init(&level, &zeroed), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_metal_reader_init(&metal, &zeroed), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_reader_init(&any, &zeroed), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_proximity_reader_init(NULL, prox_image), LC_ERR_NULL_POINTER);
  EXPECT(lc_level_reader_init(NULL, level_image), LC_ERR_NULL_POINTER);
  EXPECT(lc_metal_reader_init(NULL, metal_image), LC_ERR_NULL_POINTER);
  EXPECT(lc_reader_init(NULL, metal_image), LC_ERR_NULL_POINTER);
  EXPECT(lc_proximity_reader_init(&prox, NULL), LC_ERR_NULL_POINTER);
  EXPECT(lc_proximity_reader_init((lc_proximity_reader_t *)misaligned, prox_image),
         LC_ERR_MISALIGNED_ARGUMENT);
  EXPECT(lc_reader_init((lc_reader_t *)misaligned, prox_image), LC_ERR_MISALIGNED_ARGUMENT);

  /* Wrong kinds. */
  EXPECT(lc_proximity_reader_init(&prox, level_image), LC_ERR_WRONG_KIND);
  EXPECT(lc_proximity_reader_init(&prox, metal_image), LC_ERR_WRONG_KIND);
  EXPECT(lc_level_reader_init(&level, prox_image), LC_ERR_WRONG_KIND);
  EXPECT(lc_metal_reader_init(&metal, level_image), LC_ERR_WRONG_KIND);
  /* ... and a failed init leaves the storage unusable. */
  lc_input_t in = {{16384u, 139506u}, {0u, 0u}, 0, 0u, 0u};
  lc_proximity_reading_t pr;
  lc_level_reading_t lr;
  lc_metal_reading_t mr;
  lc_reading_t r;
  EXPECT(lc_proximity_read(&prox, &in, &pr), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_level_read(&level, &in, &lr), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_metal_read(&metal, &in, &mr), LC_ERR_NOT_INITIALISED);
  memset(&any, 0, sizeof any);
  EXPECT(lc_reader_read(&any, &in, &r), LC_ERR_NOT_INITIALISED);

  EXPECT(lc_proximity_reader_init(&prox, prox_image), LC_OK);
  EXPECT(lc_level_reader_init(&level, level_image), LC_OK);
  EXPECT(lc_metal_reader_init(&metal, metal_image), LC_OK);
  EXPECT(lc_reader_init(&any, prox_image), LC_OK);

  EXPECT(lc_proximity_read(NULL, &in, &pr), LC_ERR_NULL_POINTER);
  EXPECT(lc_proximity_read(&prox, NULL, &pr), LC_ERR_NULL_POINTER);
  EXPECT(lc_proximity_read(&prox, &in, NULL), LC_ERR_NULL_POINTER);
  EXPECT(lc_level_read(NULL, &in, &lr), LC_ERR_NULL_POINTER);
  EXPECT(lc_level_read(&level, NULL, &lr), LC_ERR_NULL_POINTER);
  EXPECT(lc_level_read(&level, &in, NULL), LC_ERR_NULL_POINTER);
  EXPECT(lc_metal_read(NULL, &in, &mr), LC_ERR_NULL_POINTER);
  EXPECT(lc_metal_read(&metal, NULL, &mr), LC_ERR_NULL_POINTER);
  EXPECT(lc_metal_read(&metal, &in, NULL), LC_ERR_NULL_POINTER);
  EXPECT(lc_reader_read(NULL, &in, &r), LC_ERR_NULL_POINTER);
  EXPECT(lc_reader_read(&any, NULL, &r), LC_ERR_NULL_POINTER);
  EXPECT(lc_reader_read(&any, &in, NULL), LC_ERR_NULL_POINTER);
  EXPECT(lc_proximity_read((lc_proximity_reader_t *)misaligned, &in, &pr),
         LC_ERR_MISALIGNED_ARGUMENT);

  /* Unknown input flags: an error, and the reading is not written. */
  for (unsigned bit = 3; bit < 8; bit++) {
    lc_input_t bad = in;
    bad.flags = (uint8_t)(1u << bit);
    memset(&pr, 0xA5, sizeof pr);
    EXPECT(lc_proximity_read(&prox, &bad, &pr), LC_ERR_BAD_INPUT_FLAGS);
    CHECK(pr.gap == (int32_t)0xA5A5A5A5);
    EXPECT(lc_level_read(&level, &bad, &lr), LC_ERR_BAD_INPUT_FLAGS);
    EXPECT(lc_metal_read(&metal, &bad, &mr), LC_ERR_BAD_INPUT_FLAGS);
    EXPECT(lc_reader_read(&any, &bad, &r), LC_ERR_BAD_INPUT_FLAGS);
  }

  /* Implausible inputs are readings with a fault, never errors. */
  lc_input_t dead = {{0u, 139506u}, {0u, 0u}, 0, 0u, 0u};
  EXPECT(lc_proximity_read(&prox, &dead, &pr), LC_OK);
  CHECK(pr.status == LC_STATUS_SENSOR_FAULT && pr.fault == LC_FAULT_COUNTS_NO_OSCILLATION &&
        pr.gap == 0);
  lc_input_t no_ref = {{4096u, 212771u}, {0u, 0u}, 2497, 0u, LC_INPUT_TEMPERATURE};
  EXPECT(lc_level_read(&level, &no_ref, &lr), LC_OK);
  CHECK(lr.status == LC_STATUS_SENSOR_FAULT && lr.fault == LC_FAULT_COMPANION_MISSING &&
        !lr.has_volume);

  /* Any input values: a pseudo-random sweep through every reader. */
  uint32_t x = 12345u;
  for (int i = 0; i < 20000; i++) {
    lc_input_t a;
    uint32_t w[6];
    for (int k = 0; k < 6; k++) {
      x = x * 1664525u + 1013904223u;
      w[k] = x;
    }
    /* Half the time near plausible counts, half anywhere. */
    a.pair.cycles = (i & 1) ? w[0] : 16384u;
    a.pair.ticks = (i & 1) ? w[1] : 70000u + w[1] % 140000u;
    a.companion.cycles = (i & 2) ? w[2] : 4096u;
    a.companion.ticks = (i & 2) ? w[3] : 180000u + w[3] % 20000u;
    a.temperature_centi_c = (i & 4) ? (int32_t)w[4] : (int32_t)(w[4] % 16000u) - 4000;
    a.ring_count = (uint16_t)w[5];
    a.flags = (uint8_t)((w[5] >> 16) & 7u);
    EXPECT(lc_proximity_read(&prox, &a, &pr), LC_OK);
    EXPECT(lc_level_read(&level, &a, &lr), LC_OK);
    EXPECT(lc_metal_read(&metal, &a, &mr), LC_OK);
    EXPECT(lc_reader_read(&any, &a, &r), LC_OK);
    CHECK(pr.status <= LC_STATUS_SENSOR_FAULT && lr.status <= LC_STATUS_SENSOR_FAULT &&
          mr.status <= LC_STATUS_SENSOR_FAULT && mr.metal_class <= LC_METAL_NON_FERROUS);
  }
}

/* In open_readers: the KIND reader OPENED in one call from image k and
   the one INITIALISED in two, reading script k; SAME(a, b) of every two
   readings (a check that fails names the expression, so the kind). */
#define OPENED_READS_AS_INITIALISED(KIND, OPENED, INITIALISED, k, SAME)        \
  do {                                                                         \
    EXPECT(lc_##KIND##_reader_open(&OPENED, bytes[k], lens[k]), LC_OK);        \
    EXPECT(lc_image_validate_##KIND(&image, bytes[k], lens[k]), LC_OK);        \
    EXPECT(lc_##KIND##_reader_init(&INITIALISED, &image), LC_OK);              \
    for (size_t i = 0; i < counts[k]; i++) {                                   \
      lc_##KIND##_reading_t a, b;                                              \
      EXPECT(lc_##KIND##_read(&OPENED, &inputs[k][i], &a), LC_OK);             \
      EXPECT(lc_##KIND##_read(&INITIALISED, &inputs[k][i], &b), LC_OK);        \
      CHECK(SAME);                                                             \
    }                                                                          \
  } while (0)

/* The one-call lc_*_reader_open: each builds its own kind's reader, whose
   readings equal those of the reader built in two steps; it refuses the
   other kinds, bad images and bad arguments as the two calls do, and a
   failed call leaves the reader not initialised. */
static void open_readers(uint8_t *const bytes[3], const size_t lens[3],
                         const lc_input_t *const inputs[3], const size_t counts[3]) {
  static uint64_t block[64];
  void *misaligned = (unsigned char *)block + 4;
  lc_proximity_reader_t prox, prox2;
  lc_level_reader_t level, level2;
  lc_metal_reader_t metal, metal2;
  lc_image_t image;
  lc_input_t in = {{16384u, 139506u}, {0u, 0u}, 0, 0u, 0u};

  OPENED_READS_AS_INITIALISED(proximity, prox, prox2, 0, (memcmp(&a, &b, sizeof a) == 0));
  OPENED_READS_AS_INITIALISED(level, level, level2, 1,
                              a.level == b.level && a.axis_q40 == b.axis_q40 &&
                                  a.volume == b.volume && a.has_volume == b.has_volume &&
                                  a.axis_is_ratio == b.axis_is_ratio &&
                                  a.status == b.status && a.fault == b.fault);
  OPENED_READS_AS_INITIALISED(metal, metal, metal2, 2,
                              a.delta_q40 == b.delta_q40 && a.ring_drop == b.ring_drop &&
                                  a.has_ring_drop == b.has_ring_drop &&
                                  a.metal_class == b.metal_class && a.status == b.status &&
                                  a.fault == b.fault);

  /* Other kinds: refused, and the reader left not initialised. */
  lc_proximity_reading_t pr;
  lc_level_reading_t lr;
  lc_metal_reading_t mr;
  EXPECT(lc_proximity_reader_open(&prox, bytes[1], lens[1]), LC_ERR_IMAGE_FIELD_READER_KIND);
  EXPECT(lc_proximity_read(&prox, &in, &pr), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_level_reader_open(&level, bytes[2], lens[2]), LC_ERR_IMAGE_FIELD_READER_KIND);
  EXPECT(lc_level_read(&level, &in, &lr), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_metal_reader_open(&metal, bytes[0], lens[0]), LC_ERR_IMAGE_FIELD_READER_KIND);
  EXPECT(lc_metal_read(&metal, &in, &mr), LC_ERR_NOT_INITIALISED);

  /* Bad images: the codes of the validation. */
  size_t len = stated_len(bytes[0]);
  uint8_t *img = malloc(len);
  memcpy(img, bytes[0], len);
  img[20] ^= 1;
  EXPECT(lc_proximity_reader_open(&prox, img, len), LC_ERR_IMAGE_BAD_CRC);
  EXPECT(lc_proximity_read(&prox, &in, &pr), LC_ERR_NOT_INITIALISED);
  EXPECT(lc_proximity_reader_open(&prox, bytes[0], 10), LC_ERR_IMAGE_TRUNCATED);
  /* Exactly len - 1 bytes: a read past them is a heap overflow. */
  uint8_t *exact = malloc(len - 1);
  memcpy(exact, bytes[0], len - 1);
  EXPECT(lc_proximity_reader_open(&prox, exact, len - 1), LC_ERR_IMAGE_TRUNCATED);
  free(exact);
  free(img);

  /* Bad arguments. */
  EXPECT(lc_proximity_reader_open(NULL, bytes[0], lens[0]), LC_ERR_NULL_POINTER);
  EXPECT(lc_level_reader_open(NULL, bytes[1], lens[1]), LC_ERR_NULL_POINTER);
  EXPECT(lc_metal_reader_open(NULL, bytes[2], lens[2]), LC_ERR_NULL_POINTER);
  EXPECT(lc_proximity_reader_open(&prox, NULL, lens[0]), LC_ERR_NULL_POINTER);
  EXPECT(lc_level_reader_open(&level, NULL, lens[1]), LC_ERR_NULL_POINTER);
  EXPECT(lc_metal_reader_open(&metal, NULL, lens[2]), LC_ERR_NULL_POINTER);
  EXPECT(lc_proximity_reader_open(&prox, bytes[0], SIZE_MAX), LC_ERR_BAD_LENGTH);
  EXPECT(lc_proximity_reader_open((lc_proximity_reader_t *)misaligned, bytes[0], lens[0]),
         LC_ERR_MISALIGNED_ARGUMENT);
  EXPECT(lc_level_reader_open((lc_level_reader_t *)misaligned, bytes[1], lens[1]),
         LC_ERR_MISALIGNED_ARGUMENT);
  EXPECT(lc_metal_reader_open((lc_metal_reader_t *)misaligned, bytes[2], lens[2]),
         LC_ERR_MISALIGNED_ARGUMENT);
}

int main(int argc, char **argv) {
  if (argc != 4) {
    fprintf(stderr, "usage: host_test PROXIMITY.lcim LEVEL.lcim METAL.lcim\n");
    return 2;
  }
  lc_layout_t layout;
  EXPECT(LC_CHECK_LAYOUT(), LC_OK);
  EXPECT(lc_check_layout(&layout, LC_IMAGE_SIZE, LC_PROXIMITY_READER_SIZE,
                         LC_LEVEL_READER_SIZE, LC_METAL_READER_SIZE, LC_READER_SIZE),
         LC_OK);
  CHECK(layout.storage_align == LC_STORAGE_ALIGN && layout.image_size == LC_IMAGE_SIZE);
  EXPECT(lc_check_layout(NULL, 1, 2, 3, 4, 5), LC_ERR_LAYOUT_MISMATCH);

  static const lc_kind_t kinds[3] = {LC_KIND_PROXIMITY, LC_KIND_LEVEL, LC_KIND_METAL};
  static const char *names[3] = {"proximity", "level", "metal"};
  /* The scripts' gate rows as the readers' inputs, expanded as the
     example firmwares expand them (script.h). */
  enum { MAX_ROWS = 64 };
  static lc_input_t rows[3][MAX_ROWS];
  const size_t counts[3] = {script_proximity_len, script_level_len, script_metal_len};
  if (counts[0] > MAX_ROWS || counts[1] > MAX_ROWS || counts[2] > MAX_ROWS) {
    fprintf(stderr, "a script has more than %d rows\n", MAX_ROWS);
    return 2;
  }
  for (size_t i = 0; i < counts[0]; i++) {
    proximity_input(&script_proximity[i], &rows[0][i]);
  }
  for (size_t i = 0; i < counts[1]; i++) {
    level_input(&script_level[i], &rows[1][i]);
  }
  for (size_t i = 0; i < counts[2]; i++) {
    metal_input(&script_metal[i], &rows[2][i]);
  }
  const lc_input_t *inputs[3] = {rows[0], rows[1], rows[2]};
  uint8_t *bytes[3];
  size_t lens[3];
  lc_image_t images[3];
  for (int k = 0; k < 3; k++) {
    bytes[k] = load(argv[1 + k], &lens[k]);
    EXPECT(lc_image_validate(&images[k], bytes[k], lens[k]), LC_OK);
    lc_image_info_t info;
    EXPECT(lc_image_info(&images[k], &info), LC_OK);
    CHECK(info.kind == kinds[k]);
    CHECK(info.length == lens[k]);
    CHECK(info.serial[16] == '\0' && strlen((const char *)info.serial) >= 1);
    CHECK(info.reference_hz > 0u);
    CHECK(info.output_exponent >= -18 && info.output_exponent <= 18);
    CHECK(info.has_volume == (kinds[k] == LC_KIND_LEVEL));
    printf("== %s\n", names[k]);
    read_script(kinds[k], &images[k], inputs[k], counts[k]);
  }
  /* The one-kind validations: each accepts its own kind, refuses the
     others, and checks the arguments as lc_image_validate does. */
  typedef lc_error_t (*validate_fn)(lc_image_t *, const uint8_t *, size_t);
  static const validate_fn one_kind[3] = {lc_image_validate_proximity, lc_image_validate_level,
                                          lc_image_validate_metal};
  for (int v = 0; v < 3; v++) {
    for (int k = 0; k < 3; k++) {
      lc_image_t image;
      lc_error_t e = one_kind[v](&image, bytes[k], lens[k]);
      if (v == k) {
        EXPECT(e, LC_OK);
        lc_image_info_t info;
        EXPECT(lc_image_info(&image, &info), LC_OK);
        CHECK(info.kind == kinds[k]);
      } else {
        EXPECT(e, LC_ERR_IMAGE_FIELD_READER_KIND);
        lc_proximity_reader_t reader;
        EXPECT(lc_proximity_reader_init(&reader, &image), LC_ERR_NOT_INITIALISED);
      }
    }
    lc_image_t image;
    EXPECT(one_kind[v](NULL, bytes[v], lens[v]), LC_ERR_NULL_POINTER);
    EXPECT(one_kind[v](&image, NULL, lens[v]), LC_ERR_NULL_POINTER);
    EXPECT(one_kind[v](&image, bytes[v], SIZE_MAX), LC_ERR_BAD_LENGTH);
    EXPECT(one_kind[v](&image, bytes[v], 10), LC_ERR_IMAGE_TRUNCATED);
  }
  open_readers(bytes, lens, inputs, counts);
  for (int k = 0; k < 3; k++) {
    bad_images(bytes[k], lens[k]);
  }
  mangled_images(bytes[0], lens[0]);
  bad_arguments(&images[0], &images[1], &images[2], bytes[0], lens[0]);
  for (int k = 0; k < 3; k++) {
    free(bytes[k]);
  }
  fprintf(stderr, "host C test: %d failed checks\n", failures);
  return failures == 0 ? 0 : 1;
}
