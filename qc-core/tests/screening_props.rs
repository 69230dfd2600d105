//! Properties of screening: it flags, it never alters statistics of valid
//! samples, and it never loses a sample from the counters.

use proptest::prelude::*;
use qc_core::{
    ChannelConfig, ChannelRecord, Event, Icing, Kind, Layout, Reading, Screen, Station,
    StationConfig, Timestamp,
};

fn layout(screened: bool) -> Layout<5> {
    let mut cfg = StationConfig::ten_minute_1hz();
    cfg.samples_per_interval = 60;
    let pick = |k: Kind| {
        if screened {
            Screen::for_kind(k)
        } else {
            Screen::OFF
        }
    };
    let mut a = pick(Kind::Speed);
    let mut vane = pick(Kind::Direction);
    if screened {
        a.partner = Some(1);
        a.icing = Some(Icing::new(3, 4));
        a.step_limit = Some(2.0);
        vane.step_limit = Some(30.0);
        vane.icing = Some(Icing::new(3, 4));
    }
    Layout::new::<4>(
        cfg,
        &[
            ChannelConfig::speed(0.1).with_gust_window(4).with_screen(a),
            ChannelConfig::speed(0.1).with_screen(pick(Kind::Speed)),
            ChannelConfig::direction()
                .with_speed_channel(0)
                .with_screen(vane),
            ChannelConfig::scalar(0.1)
                .with_range(-30.0, 40.0)
                .with_screen(pick(Kind::Scalar)),
            ChannelConfig::scalar(1.0)
                .with_range(0.0, 100.0)
                .with_screen(pick(Kind::Scalar)),
        ],
    )
    .unwrap()
}

fn reading() -> impl Strategy<Value = Reading> {
    prop_oneof![
        8 => (-5.0f64..60.0).prop_map(Reading::Value),
        1 => Just(Reading::Missing),
        1 => Just(Reading::Flagged),
        1 => Just(Reading::Value(f64::NAN)),
        1 => Just(Reading::Value(-999.0)),
        1 => (-100i32..800).prop_map(Reading::Counts),
    ]
}

fn run(layout: Layout<5>, samples: &[(i64, [Reading; 5])]) -> (Vec<[ChannelRecord; 5]>, u64) {
    let mut st: Station<5, 4> = Station::new(layout);
    let mut out = Vec::new();
    let mut emit = |e: Event<'_, 5, 4>| {
        if let Event::Closed(acc, _) = e {
            out.push(layout.finish_all(acc));
        }
    };
    for (t, r) in samples {
        st.push(Timestamp::from_millis(*t), r, &mut emit);
    }
    st.close(&mut emit);
    (out, st.totals().unplaced)
}

fn bits(r: &ChannelRecord) -> [Option<u64>; 9] {
    [
        r.mean,
        r.sd,
        r.min,
        r.max,
        r.gust,
        r.ti,
        r.resultant_length,
        r.resultant_speed,
        r.resultant_direction,
    ]
    .map(|s| s.value().map(f64::to_bits))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn screening_only_flags(
        steps in proptest::collection::vec((0i64..25_000, proptest::array::uniform5(reading())), 1..400)
    ) {
        // Timestamps: increasing with occasional repeats and backward steps.
        let mut t = 1_700_000_000_000i64;
        let samples: Vec<(i64, [Reading; 5])> = steps
            .iter()
            .map(|(dt, r)| {
                t += dt - 2_000;
                (t, *r)
            })
            .collect();
        let (plain, unplaced_a) = run(layout(false), &samples);
        let (screened, unplaced_b) = run(layout(true), &samples);
        prop_assert_eq!(plain.len(), screened.len());
        prop_assert_eq!(unplaced_a, unplaced_b);
        for (a, b) in plain.iter().zip(&screened) {
            for c in 0..5 {
                prop_assert_eq!(a[c].tally, b[c].tally);
                prop_assert_eq!(bits(&a[c]), bits(&b[c]));
            }
        }
        // Every sample lands in exactly one counter of every channel.
        for c in 0..5 {
            let counted: u64 = screened.iter().map(|r| r[c].tally.total()).sum();
            prop_assert_eq!(counted + unplaced_b, samples.len() as u64);
        }
    }
}
