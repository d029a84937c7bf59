//! The first pass's chunk checkpoints as small Parquet files: a chunk's rows
//! with every number stored exactly, so a resumed or merged run reads back
//! the rows it wrote. A double is stored as its 64 bits in an integer
//! column: the file then holds exactly those bits whatever the encoder does
//! with floats (it builds dictionaries by comparing values, where −0 and 0
//! are equal). JSON text took about 1.2 kB per candidate, most of it field
//! names, 17-digit numbers and the same warnings on every row: a
//! 10⁸-candidate screen would have kept some 120 GB of checkpoints until it
//! finished. Parquet's dictionary pages hold the repeated texts once per
//! chunk (about 150 bytes per candidate in chunks of 256 to 512).
//!
//! Writing a Parquet file has a cost per column whatever its length (the
//! writer estimates every column's distinct values to choose its encoding),
//! so the optional numbers of a row share one list column, in the order of
//! [`NUMBERS`]; LZ4 compresses, and no column statistics are kept (nothing
//! filters a checkpoint).
//!
//! The Parquet bytes are followed by their SHA-256 (32 bytes): a chunk
//! damaged on disk (a crash before its data reached the disk, a changed
//! byte) is recognised before it is parsed. Parquet pages carry no checksum
//! of their own as written here, so a changed byte could otherwise read as
//! other numbers, or make the Parquet reader give up with a panic.

use super::fit_data::sha256_hex_of;
use crate::composition::N_OXIDES;
use crate::screen::limits::LimitSet;
use crate::screen::Row;
use polars::prelude::*;
use sha2::{Digest, Sha256};
use std::io::Cursor;

/// Bytes of the SHA-256 that ends a checkpoint.
const DIGEST_LEN: usize = 32;

/// A row's optional numbers, as stored: how to read each and how to set it.
type Number = (fn(&Row) -> Option<f64>, fn(&mut Row, Option<f64>));

/// The optional numbers of a row, in the order of the `numbers` column
/// (changing the order changes the checkpoint format: `run_folder::FORMAT`).
const NUMBERS: [Number; 15] = [
    (|r| r.penalised, |r, v| r.penalised = v),
    (|r| r.objective, |r, v| r.objective = v),
    (
        |r| r.critical_rate_k_per_s,
        |r, v| r.critical_rate_k_per_s = v,
    ),
    (|r| r.nose_rate_k_per_s, |r, v| r.nose_rate_k_per_s = v),
    (|r| r.margin_decades, |r, v| r.margin_decades = v),
    (
        |r| r.melting_temperature_k,
        |r, v| r.melting_temperature_k = v,
    ),
    (|r| r.liquidus_k, |r, v| r.liquidus_k = v),
    (|r| r.glass_transition_k, |r, v| r.glass_transition_k = v),
    (|r| r.working_point_k, |r, v| r.working_point_k = v),
    (|r| r.softening_point_k, |r, v| r.softening_point_k = v),
    (|r| r.cost_per_kg, |r, v| r.cost_per_kg = v),
    (|r| r.probability_glassy, |r, v| r.probability_glassy = v),
    (
        |r| r.critical_rate_p05_k_per_s,
        |r, v| r.critical_rate_p05_k_per_s = v,
    ),
    (
        |r| r.critical_rate_p95_k_per_s,
        |r, v| r.critical_rate_p95_k_per_s = v,
    ),
    (
        |r| r.probability_glassy_lower95,
        |r, v| r.probability_glassy_lower95 = v,
    ),
];

/// A chunk's rows as the bytes of a Parquet file.
///
/// # Errors
/// Polars refuses the columns or fails to encode them.
pub(crate) fn encode(rows: &[Row]) -> PolarsResult<Vec<u8>> {
    // Doubles as their bits: lists of `u64`, one per row.
    let bits = |name: &str, width: usize, row: &dyn Fn(&Row) -> Vec<Option<u64>>| {
        let mut b = ListPrimitiveChunkedBuilder::<UInt64Type>::new(
            name.into(),
            rows.len(),
            rows.len() * width,
            DataType::UInt64,
        );
        for r in rows {
            b.append_iter(row(r).into_iter());
        }
        b.finish().into_column()
    };
    let texts = |name: &str, get: fn(&Row) -> Option<&str>| {
        Column::new(name.into(), rows.iter().map(get).collect::<Vec<_>>())
    };
    let flags = |name: &str, get: fn(&Row) -> Option<bool>| {
        Column::new(name.into(), rows.iter().map(get).collect::<Vec<_>>())
    };
    let cols = vec![
        Column::new(
            "index".into(),
            rows.iter().map(|r| r.index).collect::<Vec<_>>(),
        ),
        flags("refined", |r| Some(r.refined)),
        bits("mol_pct", N_OXIDES, &|r| {
            r.mol_pct.iter().map(|x| Some(x.to_bits())).collect()
        }),
        flags("feasible", |r| Some(r.feasible)),
        Column::new(
            "broken".into(),
            rows.iter().map(|r| r.broken.bits()).collect::<Vec<u16>>(),
        ),
        bits("numbers", NUMBERS.len(), &|r| {
            NUMBERS
                .iter()
                .map(|(get, _)| get(r).map(f64::to_bits))
                .collect()
        }),
        texts("primary_phase", |r| r.primary_phase.as_deref()),
        texts("limiting_phase", |r| r.limiting_phase.as_deref()),
        flags("vouched", |r| r.vouched),
        texts("warnings", |r| Some(&r.warnings)),
        texts("error", |r| r.error.as_deref()),
        Column::new(
            "evaluations".into(),
            rows.iter()
                .map(|r| r.evaluations as u64)
                .collect::<Vec<_>>(),
        ),
        texts("binding", |r| Some(&r.binding)),
        flags("band_vouched", |r| r.band_vouched),
        texts("probability_from", |r| r.probability_from.as_deref()),
        bits("probability_glassy_with", 0, &|r| {
            r.probability_glassy_with
                .iter()
                .map(|x| x.map(f64::to_bits))
                .collect()
        }),
    ];
    let mut df = DataFrame::new_infer_height(cols)?;
    let mut bytes = Vec::new();
    ParquetWriter::new(&mut bytes)
        .with_compression(ParquetCompression::Lz4Raw)
        .with_statistics(StatisticsOptions::empty())
        // On this thread: polars' own pool would wait behind the screen's.
        .set_parallel(false)
        .finish(&mut df)?;
    let digest = Sha256::digest(&bytes);
    bytes.extend_from_slice(&digest);
    Ok(bytes)
}

/// A refined seed's row as kept: JSON of the row and the SHA-256 of that
/// text, `{"sha256":"…","row":{…}}`, so that a changed digit is found (the
/// row, written again, no longer gives the digest) instead of read.
///
/// # Errors
/// The row cannot be written as JSON.
pub(crate) fn encode_seed(row: &Row) -> Result<Vec<u8>, String> {
    let text = serde_json::to_string(row).map_err(|e| e.to_string())?;
    Ok(format!(
        "{{\"sha256\":\"{}\",\"row\":{text}}}",
        sha256_hex_of(text.as_bytes())
    )
    .into_bytes())
}

/// The row of a refined seed written by [`encode_seed`].
///
/// # Errors
/// Text that is not such a file, or whose row does not give its digest.
pub(crate) fn decode_seed(bytes: &[u8]) -> Result<Row, String> {
    #[derive(serde::Deserialize)]
    struct Sealed {
        sha256: String,
        row: Row,
    }
    let sealed: Sealed = serde_json::from_slice(bytes).map_err(|e| e.to_string())?;
    let text = serde_json::to_string(&sealed.row).map_err(|e| e.to_string())?;
    if sha256_hex_of(text.as_bytes()) != sealed.sha256 {
        return Err("its SHA-256 does not match its contents (damaged)".to_string());
    }
    Ok(sealed.row)
}

/// Whether `bytes` end with the SHA-256 of what comes before them, as a
/// chunk written by [`encode`] does (the check [`decode`] starts with,
/// without reading the rows).
pub(crate) fn intact(bytes: &[u8]) -> bool {
    bytes
        .len()
        .checked_sub(DIGEST_LEN)
        .is_some_and(|at| Sha256::digest(&bytes[..at]).as_slice() == &bytes[at..])
}

/// The rows of a chunk written by [`encode`].
///
/// # Errors
/// Bytes that are not such a file (cut short, emptied, damaged inside,
/// another layout): the message says what is wrong.
pub(crate) fn decode(mut bytes: Vec<u8>) -> Result<Vec<Row>, String> {
    let Some(at) = bytes.len().checked_sub(DIGEST_LEN) else {
        return Err(format!("the file is cut short ({} bytes)", bytes.len()));
    };
    if !intact(&bytes) {
        return Err("its SHA-256 does not match its contents (cut short or damaged)".to_string());
    }
    bytes.truncate(at);
    // A file that passes the check is one this program wrote; should the
    // Parquet reader still give up on it with a panic, that is a damaged
    // checkpoint like any other, not the end of a resume or a merge.
    std::panic::catch_unwind(move || decode_frame(bytes)).unwrap_or_else(|_| {
        Err("the file is damaged inside (the Parquet reader gave up)".to_string())
    })
}

fn decode_frame(bytes: Vec<u8>) -> Result<Vec<Row>, String> {
    let df = ParquetReader::new(Cursor::new(bytes))
        .read_parallel(ParallelStrategy::None)
        .finish()
        .map_err(|e| e.to_string())?;
    let text = |e: PolarsError| e.to_string();
    let col = |name: &str| df.column(name).map_err(text);
    let missing = |name: &str| format!("column {name}: a missing value");
    let flags = |name: &str| -> Result<Vec<Option<bool>>, String> {
        Ok(col(name)?.bool().map_err(text)?.iter().collect())
    };
    let required = |name: &str| -> Result<Vec<bool>, String> {
        flags(name)?
            .into_iter()
            .map(|x| x.ok_or_else(|| missing(name)))
            .collect()
    };
    let texts = |name: &str| -> Result<Vec<Option<String>>, String> {
        Ok(col(name)?
            .str()
            .map_err(text)?
            .iter()
            .map(|s| s.map(str::to_string))
            .collect())
    };
    let required_text = |name: &str| -> Result<Vec<String>, String> {
        texts(name)?
            .into_iter()
            .map(|x| x.ok_or_else(|| missing(name)))
            .collect()
    };
    let u64s = |name: &str| -> Result<Vec<u64>, String> {
        col(name)?
            .u64()
            .map_err(text)?
            .iter()
            .map(|x| x.ok_or_else(|| missing(name)))
            .collect()
    };
    let doubles = |name: &str| -> Result<Vec<Vec<Option<f64>>>, String> {
        let ca = col(name)?.list().map_err(text)?;
        (0..ca.len())
            .map(|i| {
                let s = ca.get_as_series(i).ok_or_else(|| missing(name))?;
                Ok(s.u64()
                    .map_err(text)?
                    .iter()
                    .map(|b| b.map(f64::from_bits))
                    .collect())
            })
            .collect()
    };
    let index = u64s("index")?;
    let evaluations = u64s("evaluations")?;
    let broken: Vec<Option<u16>> = col("broken")?.u16().map_err(text)?.iter().collect();
    let (refined, feasible) = (required("refined")?, required("feasible")?);
    let (vouched, band_vouched) = (flags("vouched")?, flags("band_vouched")?);
    let mol_pct = doubles("mol_pct")?;
    let numbers = doubles("numbers")?;
    let p_with = doubles("probability_glassy_with")?;
    let (mut primary, mut limiting) = (texts("primary_phase")?, texts("limiting_phase")?);
    let (mut error, mut p_from) = (texts("error")?, texts("probability_from")?);
    let (mut warnings, mut binding) = (required_text("warnings")?, required_text("binding")?);
    let take = std::mem::take::<Option<String>>;
    let mut rows = Vec::with_capacity(df.height());
    for i in 0..df.height() {
        for (name, len, want) in [
            ("numbers", numbers[i].len(), NUMBERS.len()),
            ("mol_pct", mol_pct[i].len(), N_OXIDES),
        ] {
            if len != want {
                return Err(format!(
                    "column {name}: {len} values in row {i}, not {want}"
                ));
            }
        }
        let mut row = Row {
            index: index[i],
            refined: refined[i],
            mol_pct: mol_pct[i]
                .iter()
                .map(|x| x.ok_or_else(|| missing("mol_pct")))
                .collect::<Result<_, _>>()?,
            feasible: feasible[i],
            broken: LimitSet::from_bits(broken[i].ok_or_else(|| missing("broken"))?),
            penalised: None,
            objective: None,
            critical_rate_k_per_s: None,
            nose_rate_k_per_s: None,
            margin_decades: None,
            melting_temperature_k: None,
            liquidus_k: None,
            primary_phase: take(&mut primary[i]),
            limiting_phase: take(&mut limiting[i]),
            vouched: vouched[i],
            glass_transition_k: None,
            working_point_k: None,
            softening_point_k: None,
            cost_per_kg: None,
            warnings: std::mem::take(&mut warnings[i]),
            error: take(&mut error[i]),
            evaluations: evaluations[i] as usize,
            binding: std::mem::take(&mut binding[i]),
            probability_glassy: None,
            critical_rate_p05_k_per_s: None,
            critical_rate_p95_k_per_s: None,
            band_vouched: band_vouched[i],
            probability_from: take(&mut p_from[i]),
            probability_glassy_lower95: None,
            probability_glassy_with: p_with[i].clone(),
        };
        for ((_, set), &v) in NUMBERS.iter().zip(&numbers[i]) {
            set(&mut row, v);
        }
        rows.push(row);
    }
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::numeric::split_mix;

    /// Rows that use every field: numbers over the whole range of doubles
    /// (subnormal, −0, the largest), missing values, empty and non-ASCII
    /// texts, empty and filled lists.
    fn rows(n: usize) -> Vec<Row> {
        let mut next = split_mix(0x00c0_ffee);
        let mut num = move |k: usize| -> Option<f64> {
            let x = next();
            match k % 7 {
                0 => None,
                1 => Some(-0.0),
                2 => Some(f64::MIN_POSITIVE / 8.0),
                3 => Some(f64::MAX),
                _ => Some((x - 0.5) * 10f64.powi((x * 600.0) as i32 - 300)),
            }
        };
        (0..n)
            .map(|i| Row {
                index: if i == 0 { u64::MAX } else { i as u64 * 7 },
                refined: i % 2 == 0,
                mol_pct: (0..N_OXIDES).map(|k| num(k + 3).unwrap_or(0.0)).collect(),
                feasible: i % 3 == 0,
                broken: LimitSet::from_bits((i * 37 % 65_536) as u16),
                penalised: num(i),
                objective: num(i + 1),
                critical_rate_k_per_s: num(i + 2),
                nose_rate_k_per_s: num(i + 3),
                margin_decades: num(i + 4),
                melting_temperature_k: num(i + 5),
                liquidus_k: num(i + 6),
                primary_phase: match i % 4 {
                    0 => None,
                    1 => Some(String::new()),
                    _ => Some(format!("phase {i} (β-wollastonite)")),
                },
                limiting_phase: (i % 5 != 0).then(|| "cristobalite".to_string()),
                vouched: [None, Some(true), Some(false)][i % 3],
                glass_transition_k: num(i + 7),
                working_point_k: num(i + 8),
                softening_point_k: num(i + 9),
                cost_per_kg: num(i + 10),
                warnings: if i % 2 == 0 {
                    String::new()
                } else {
                    "a; b — ΔG ≤ 0".into()
                },
                error: (i % 6 == 1).then(|| "no liquidus\nsecond line".to_string()),
                evaluations: i * 1_000_003,
                binding: if i % 3 == 0 {
                    "cost, melting".into()
                } else {
                    String::new()
                },
                probability_glassy: num(i + 11),
                critical_rate_p05_k_per_s: num(i + 12),
                critical_rate_p95_k_per_s: num(i + 13),
                band_vouched: [Some(false), None, Some(true)][i % 3],
                probability_from: (i % 2 == 1).then(|| "draws".to_string()),
                probability_glassy_lower95: num(i + 14),
                probability_glassy_with: (0..i % 4).map(|k| num(k + i)).collect(),
            })
            .collect()
    }

    #[test]
    fn a_chunk_reads_back_bit_for_bit() {
        // Source: the rows themselves; every double is compared by its bits
        // (serde_json writes −0 as "-0.0" and every double to the bit).
        for n in [1, 2, 7, 512] {
            let rows = rows(n);
            let back = decode(encode(&rows).unwrap()).unwrap();
            assert_eq!(back, rows);
            assert_eq!(
                serde_json::to_string(&back).unwrap(),
                serde_json::to_string(&rows).unwrap()
            );
        }
    }

    #[test]
    fn a_damaged_chunk_is_refused_not_misread() {
        // A file cut short by a kill, an emptied one, and JSON text (another
        // layout) are errors, never rows.
        let bytes = encode(&rows(64)).unwrap();
        for cut in [0, 4, bytes.len() / 2, bytes.len() - 1] {
            assert!(decode(bytes[..cut].to_vec()).is_err(), "cut at {cut}");
        }
        assert!(decode(b"[{\"index\": 0}]".to_vec()).is_err());
    }

    #[test]
    fn a_changed_byte_anywhere_in_a_chunk_is_refused() {
        // Without the SHA-256, of these 2 086 one-bit changes 1 214 read
        // back as other rows, 416 as the same rows, 21 made the Parquet
        // reader panic and the rest were errors (tried 2026-12-03 with the
        // check switched off).
        let bytes = encode(&rows(8)).unwrap();
        let mut next = split_mix(0x5eed);
        for at in 0..bytes.len() {
            let mut b = bytes.clone();
            b[at] ^= 1 << ((next() * 8.0) as u32);
            let e = decode(b).unwrap_err();
            assert!(e.contains("SHA-256 does not match"), "byte {at}: {e}");
        }
    }

    #[test]
    fn a_checkpoint_is_the_parquet_file_and_its_sha256() {
        // Source: FIPS 180-4 SHA-256, as the sha2 crate computes it; the
        // Parquet part is read by polars' own reader unchanged.
        let bytes = encode(&rows(5)).unwrap();
        let (file, digest) = bytes.split_at(bytes.len() - DIGEST_LEN);
        assert_eq!(Sha256::digest(file).as_slice(), digest);
        assert_eq!(&file[..4], b"PAR1");
        assert_eq!(&file[file.len() - 4..], b"PAR1");
        let df = ParquetReader::new(Cursor::new(file.to_vec()))
            .finish()
            .unwrap();
        assert_eq!(df.height(), 5);
    }

    #[test]
    fn a_refined_seed_reads_back_and_a_changed_digit_is_refused() {
        // Source: the rows themselves, compared whole (and by their JSON).
        for r in rows(4) {
            let bytes = encode_seed(&r).unwrap();
            assert_eq!(decode_seed(&bytes).unwrap(), r);
            // Every digit of the row's text changed in turn: refused, or
            // (where the change leaves the same row) read as that row.
            let at = bytes.windows(7).position(|w| w == b"\"row\":{").unwrap();
            let mut found = 0;
            for i in at..bytes.len() {
                if !bytes[i].is_ascii_digit() {
                    continue;
                }
                let mut b = bytes.clone();
                b[i] = if b[i] == b'9' { b'0' } else { b[i] + 1 };
                match decode_seed(&b) {
                    Ok(back) => assert_eq!(back, r, "digit at {i}"),
                    Err(e) => found += usize::from(e.contains("SHA-256 does not match")),
                }
            }
            assert!(found > 10, "{found} changed digits found by the digest");
        }
        assert!(decode_seed(b"{\"index\": 0}").is_err());
    }

    #[test]
    fn rows_of_another_shape_are_refused() {
        let mut short = rows(3);
        short[1].mol_pct.pop();
        let e = decode(encode(&short).unwrap()).unwrap_err();
        assert!(e.contains("mol_pct") && e.contains("row 1"), "{e}");
    }
}
