//! The throughput baseline for `bench/compare.sh`: a bare, single-threaded csv-crate scan that reads
//! every record of a file into one reused `ByteRecord` and does nothing else with it.
//!
//! Usage: `cargo run --release --example scan_csv -- FILE`

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

use std::fs::File;
use std::io::BufReader;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args().nth(1).ok_or("usage: scan_csv FILE")?;
    let file = BufReader::with_capacity(1 << 16, File::open(&path)?);
    let mut rdr = csv::ReaderBuilder::new().flexible(false).from_reader(file);
    let mut record = csv::ByteRecord::new();
    let (mut rows, mut fields) = (0u64, 0u64);
    while rdr.read_byte_record(&mut record)? {
        rows += 1;
        // Touch the record so the scan cannot be optimised into nothing.
        fields += record.len() as u64;
    }
    println!("{rows} records, {fields} fields");
    Ok(())
}
