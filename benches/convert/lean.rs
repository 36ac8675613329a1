//! The machine's limit for `lc-host convert`: a lean single-pass,
//! single-threaded conversion of a proximity field log with lc-core's
//! reader, written for speed and nothing else. No checks beyond what a
//! clean log needs, fixed columns, no error messages worth the name; the
//! same output bytes as `lc-host convert` (the comparison script checks
//! that), so both do the same work.
//!
//!   cargo build --release --example convert_lean
//!   target/release/examples/convert_lean IMAGE.lcim FIELD.csv OUT.csv
//!
//! Run by benches/convert/compare.sh; figures in docs/performance.md.

use lc_core::counting::CountPair;
use lc_core::image::Calibration;
use lc_core::reader::{Input, Reader, Status};
use lc_core::temperature::CentiCelsius;
use lc_host::convert::{header_text, status_name, Converter};
use lc_host::csvout::{push_fixed, push_int, push_int_opt, push_scaled, push_shortest};
use std::io::{Read, Write};

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [image, field, out] = args.as_slice() else {
        eprintln!("usage: convert_lean IMAGE.lcim FIELD.csv OUT.csv");
        std::process::exit(2);
    };
    let bytes = std::fs::read(image).expect("image");
    let cal = Calibration::parse(&bytes).expect("valid image");
    let image = lc_host::host_image(&cal).expect("image");
    let mut reader = Reader::new(&image).expect("reader");
    let mut input = std::fs::File::open(field).expect("field log");
    let mut output = std::fs::File::create(out).expect("output");

    // The comment line and the header, as convert writes them (once per
    // run: not part of the per-row work).
    let conv = Converter::new(cal).expect("converter");
    let mut head = header_text(&conv, false, &[]).into_bytes();
    head.push(b'\n');
    output.write_all(&head).expect("write");
    let exp = cal.output.decimal_exponent;

    // Column positions from the header line.
    let mut cols: Option<[usize; 5]> = None;
    let mut buf = vec![0u8; 1 << 20];
    let (mut have, mut line_no) = (0usize, 0u64);
    let mut out = Vec::with_capacity(1 << 21);
    loop {
        let n = input.read(&mut buf[have..]).expect("read");
        let end = have + n;
        let upto = if n == 0 {
            end
        } else {
            buf[..end]
                .iter()
                .rposition(|&b| b == b'\n')
                .map_or(0, |k| k + 1)
        };
        // One small allocation per megabyte read, not per row.
        let mut fields: Vec<&[u8]> = Vec::with_capacity(8);
        for line in buf[..upto].split(|&b| b == b'\n') {
            line_no += 1;
            if line.is_empty() || line[0] == b'#' {
                continue;
            }
            fields.clear();
            fields.extend(line.split(|&b| b == b','));
            let Some([time, channel, cycles, ticks, temp]) = cols else {
                let pos = |name: &str| {
                    fields
                        .iter()
                        .position(|f| f.eq_ignore_ascii_case(name.as_bytes()))
                        .expect("column")
                };
                cols = Some([
                    pos("time_s"),
                    pos("channel"),
                    pos("cycles"),
                    pos("ticks"),
                    pos("temp_c"),
                ]);
                continue;
            };
            let text = |i: usize| std::str::from_utf8(fields[i]).expect("utf-8");
            let time_s: f64 = text(time).parse().expect("time_s");
            let channel: Option<u8> = Some(text(channel))
                .filter(|s| !s.is_empty())
                .map(|s| s.parse().expect("channel"));
            let pair = CountPair::new(
                text(cycles).parse().expect("cycles"),
                text(ticks).parse().expect("ticks"),
            );
            let temperature = Some(text(temp))
                .filter(|s| !s.is_empty())
                .and_then(|s| CentiCelsius::from_f64(s.parse().expect("temp_c")));
            let r = reader.read(&Input {
                pair,
                companion: None,
                temperature,
                ring_count: None,
            });
            let fault = matches!(r.status(), Status::SensorFault(_));
            push_int(&mut out, line_no);
            out.push(b',');
            push_shortest(&mut out, time_s);
            out.push(b',');
            push_int_opt(&mut out, channel);
            out.push(b',');
            out.extend_from_slice(status_name(r.status()).as_bytes());
            out.push(b',');
            if !fault {
                push_scaled(&mut out, i64::from(r.output()), exp);
            }
            out.push(b',');
            if !fault {
                push_fixed(
                    &mut out,
                    lc_core::shift::Shift::from_raw_q40(r.curve_input_q40()).to_ppm_f64(),
                    6,
                );
            }
            out.push(b'\n');
        }
        if out.len() >= 1 << 20 {
            output.write_all(&out).expect("write");
            out.clear();
        }
        drop(fields);
        if n == 0 {
            break;
        }
        // The last split piece after the final '\n' is empty and counted
        // as a line: take it back.
        line_no -= 1;
        buf.copy_within(upto..end, 0);
        have = end - upto;
    }
    output.write_all(&out).expect("write");
}
