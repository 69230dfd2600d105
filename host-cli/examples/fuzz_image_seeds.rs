//! Writes the seed inputs of the `image` fuzz target (`host-cli/fuzz/`) into
//! the folder given: layout images of a few invented four-channel stations
//! (`qc_core::Layout::to_image`, gust capacity 3: the C interface's shape
//! `c4g3`, which `host_cli::fuzzing::image` reads), whole and cut one byte
//! short. Run by `host-cli/fuzz/seed.sh`, which adds sample files.

use std::path::PathBuf;

use qc_core::{ChannelConfig, Layout, Recal, Screen, StationConfig};

const C: usize = 4;
const G: usize = 3;

fn main() {
    let dir = PathBuf::from(
        std::env::args()
            .nth(1)
            .expect("usage: fuzz_image_seeds DIR"),
    );
    std::fs::create_dir_all(&dir).expect("the seed folder");
    let mut screened_speed = ChannelConfig::speed(0.01).with_screen(Screen {
        step_limit: Some(10.0),
        mean_range: Some((0.5, 40.0)),
        sd_range: Some((0.0, 5.0)),
        gust_max: Some(60.0),
        min_recovery: Some(0.8),
        flat_span_s: Some(3600),
        flat_tolerance: 0.05,
        partner: Some(1),
        pair_mean_diff: 0.5,
        pair_max_diff: 2.0,
        above: None,
        shear_tolerance: 0.2,
        icing: None,
    });
    screened_speed.screen.above = Some(1);
    let stations: [(&str, StationConfig, [ChannelConfig; C]); 3] = [
        (
            "mast",
            StationConfig::ten_minute_1hz(),
            [
                ChannelConfig::speed(0.01),
                ChannelConfig::speed(0.01),
                ChannelConfig::direction()
                    .with_calibration(0.1, 0.0)
                    .with_mounting_offset(12.5)
                    .with_speed_channel(0),
                ChannelConfig::scalar(0.1).with_range(-40.0, 50.0),
            ],
        ),
        (
            "screened",
            StationConfig::ten_minute_1hz(),
            [
                screened_speed,
                ChannelConfig::speed(0.01).with_recalibration(Recal {
                    logger_slope: 0.765,
                    logger_offset: 0.35,
                    cert_slope: 0.7612,
                    cert_offset: 0.29,
                }),
                ChannelConfig::direction().with_speed_channel(1),
                ChannelConfig::scalar(0.1),
            ],
        ),
        (
            "minute",
            StationConfig {
                interval_s: 60,
                samples_per_interval: 240,
                missing_values: [None; qc_core::MAX_SENTINELS],
            },
            [
                ChannelConfig::speed(0.05).with_gust_window(3),
                ChannelConfig::direction(),
                ChannelConfig::scalar(0.01).with_calibration(0.01, -40.0),
                ChannelConfig::scalar(1.0).with_range(0.0, 100.0),
            ],
        ),
    ];
    for (name, station, channels) in stations {
        let layout = match Layout::<C>::new::<G>(station, &channels) {
            Ok(l) => l,
            Err(e) => panic!("seed station {name}: {e:?}"),
        };
        let mut image = [0u8; Layout::<C>::IMAGE_LEN];
        let n = layout.to_image::<G>(&mut image).expect("an image");
        std::fs::write(dir.join(format!("seed-{name}.bin")), &image[..n]).expect("a seed file");
        // Cut one byte short: refused.
        std::fs::write(dir.join(format!("seed-{name}-cut.bin")), &image[..n - 1])
            .expect("a seed file");
    }
}
