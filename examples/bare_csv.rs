//! The reference limit for `concord check`: a bare csv-crate parse of a file, reusing one
//! `ByteRecord` and counting fields, with no UTF-8 validation and no checking.
//!
//! Used by `bench/run.sh`: `cargo run --release --example bare_csv -- FILE`.

use std::fs::File;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args().nth(1).ok_or("usage: bare_csv FILE")?;
    // The csv crate buffers its input itself, as it does inside concord.
    let file = File::open(&path)?;
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(file);
    let mut record = csv::ByteRecord::new();
    let (mut records, mut fields, mut bytes) = (0u64, 0u64, 0u64);
    while reader.read_byte_record(&mut record)? {
        records += 1;
        fields += record.len() as u64;
        bytes += record.as_slice().len() as u64;
    }
    println!("{records} records, {fields} fields, {bytes} field bytes");
    Ok(())
}
