//! Fuzz target: any bytes as a monitor history must give finite samples and a finite
//! reduction, or a clean error naming the file. The first byte chooses the reading options.
#![no_main]
use libfuzzer_sys::fuzz_target;
use meshbound::history::{
    analyse, read::read_history_from, ColumnRef, Decimal, HistorySettings, ReadOptions, Separator,
};
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let Some((&c, text)) = data.split_first() else {
        return;
    };
    let column = if c & 1 == 0 {
        ColumnRef::Name("v".into())
    } else {
        ColumnRef::Position(1 + (c as usize >> 1) % 4)
    };
    let separator = [
        Separator::Auto,
        Separator::Spaces,
        Separator::Comma,
        Separator::Semicolon,
        Separator::Tab,
    ][(c as usize >> 3) % 5];
    let decimal = [Decimal::Auto, Decimal::Point, Decimal::Comma][(c as usize >> 5) % 3];
    let o = ReadOptions {
        column,
        abscissa: (c & 0x80 != 0).then_some(ColumnRef::Position(1)),
        separator,
        decimal,
    };
    match read_history_from(text, Path::new("fuzz.dat"), &o) {
        Ok(s) => {
            assert!(!s.values.is_empty() && s.values.iter().all(|v| v.is_finite()));
            let r = analyse(&s, &HistorySettings::default()).expect("finite samples reduce");
            assert!(r.value.is_finite() && r.mean.is_finite());
        }
        Err(e) => assert!(e.to_string().starts_with("fuzz.dat")),
    }
});
