/* The calibration image in its own flash page (section .calibration, see
   link.ld), 4-byte aligned: lc_image_validate reads it in place, by
   words. LC_IMAGE_FILE is the .lcim file `lc-host calibrate` wrote (a
   product may ship the page erased and let the rig write the image). */
  .section .calibration, "a"
  .balign 4
  .global lc_unit_image
lc_unit_image:
  .incbin LC_IMAGE_FILE
  .global lc_unit_image_end
lc_unit_image_end:

  .section .note.GNU-stack, "", %progbits
