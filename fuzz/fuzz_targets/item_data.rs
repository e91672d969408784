//! Any bytes as a raw item file, read both ways (all columns, and two named items with
//! reverse keying): a result or an error, never a panic. The analysis runs on whatever
//! could be read.
#![no_main]

use libfuzzer_sys::fuzz_target;
use relyard::items::{ItemReadOptions, Missing, analyze, read_items};

fuzz_target!(|data: &[u8]| {
    let path = std::env::temp_dir().join(format!("relyard-fuzz-items-{}.csv", std::process::id()));
    if std::fs::write(&path, data).is_err() {
        return;
    }
    for options in [
        ItemReadOptions::default(),
        ItemReadOptions {
            missing: Missing::Pairwise,
            ..ItemReadOptions::default()
        },
        ItemReadOptions {
            items: Some(vec!["a".into(), "b".into()]),
            reverse: vec!["b".into()],
            scale: Some((1.0, 5.0)),
            keep_rows: true,
            ..ItemReadOptions::default()
        },
    ] {
        if let Ok(d) = read_items(&path, &options) {
            let _ = analyze(&d, relyard::Level::NINETY_FIVE);
        }
    }
});
