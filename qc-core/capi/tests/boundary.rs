//! The entry points as a C caller meets them: every refused call returns its
//! own code and changes nothing; a good sequence hands out frames a reader
//! accepts.

use std::ffi::{c_void, CStr};
use std::ptr;

use tenmin_qc::*;

/// A block of `n` bytes aligned to 8, as a C program declares one.
fn block(n: usize) -> Vec<u64> {
    vec![0u64; n.div_ceil(8)]
}

fn reading(kind: u8, counts: i32, value: f64) -> tm_reading {
    tm_reading {
        kind,
        counts,
        value,
    }
}

/// A station of a cup and a vane, 10 minutes at 1 Hz.
fn settings() -> (tm_station_settings, [tm_channel_settings; 2]) {
    // SAFETY: every pointer is to a live local of the right type.
    unsafe {
        let mut st = std::mem::zeroed();
        assert_eq!(tm_station_defaults(&mut st), tm_status::TM_OK);
        let mut ch: [tm_channel_settings; 2] = std::mem::zeroed();
        assert_eq!(
            tm_channel_defaults(TM_KIND_SPEED, 0.01, &mut ch[0]),
            tm_status::TM_OK
        );
        assert_eq!(
            tm_channel_defaults(TM_KIND_DIRECTION, 0.0, &mut ch[1]),
            tm_status::TM_OK
        );
        ch[1].speed_channel = 0;
        (st, ch)
    }
}

fn build(
    layout: &mut [u64],
    st: &tm_station_settings,
    ch: &[tm_channel_settings],
) -> (tm_status, u8) {
    let mut bad = 0u8;
    // SAFETY: the block, settings and output are live and of the sizes passed.
    let s = unsafe {
        tm_layout_build_c8g3(
            layout.as_mut_ptr().cast(),
            layout.len() * 8,
            st,
            ch.as_ptr(),
            ch.len(),
            &mut bad,
        )
    };
    (s, bad)
}

#[test]
fn layout_build_refuses_each_bad_argument_with_its_own_code() {
    let (st, ch) = settings();
    let mut layout = block(TM_LAYOUT_C8G3_SIZE);
    // SAFETY: NULL and short blocks are what is tested; the library checks them.
    unsafe {
        let s = tm_layout_build_c8g3(ptr::null_mut(), 4096, &st, ch.as_ptr(), 2, ptr::null_mut());
        assert_eq!(s, tm_status::TM_ERR_NULL);
        let s = tm_layout_build_c8g3(
            layout.as_mut_ptr().cast(),
            100,
            &st,
            ch.as_ptr(),
            2,
            ptr::null_mut(),
        );
        assert_eq!(s, tm_status::TM_ERR_SIZE);
        let odd = layout.as_mut_ptr().cast::<u8>().add(4).cast::<c_void>();
        let s = tm_layout_build_c8g3(
            odd,
            TM_LAYOUT_C8G3_SIZE - 8,
            &st,
            ch.as_ptr(),
            2,
            ptr::null_mut(),
        );
        assert_eq!(s, tm_status::TM_ERR_ALIGN);
        let s = tm_layout_build_c8g3(
            layout.as_mut_ptr().cast(),
            layout.len() * 8,
            ptr::null(),
            ch.as_ptr(),
            2,
            ptr::null_mut(),
        );
        assert_eq!(s, tm_status::TM_ERR_NULL);
        let s = tm_layout_build_c8g3(
            layout.as_mut_ptr().cast(),
            layout.len() * 8,
            &st,
            ptr::null(),
            2,
            ptr::null_mut(),
        );
        assert_eq!(s, tm_status::TM_ERR_NULL);
    }
    assert_eq!(
        build(&mut layout, &st, &[]).0,
        tm_status::TM_CONFIG_CAPACITY
    );
    assert_eq!(
        build(&mut layout, &st, &[ch[0]; 9]).0,
        tm_status::TM_CONFIG_CAPACITY
    );
    let mut bad = ch;
    bad[1].kind = 7;
    assert_eq!(build(&mut layout, &st, &bad), (tm_status::TM_ERR_KIND, 1));
    let mut bad = ch;
    bad[1].range_low = 400.0;
    assert_eq!(
        build(&mut layout, &st, &bad),
        (tm_status::TM_CONFIG_RANGE, 1)
    );
    let mut bad = ch;
    bad[0].gust_window = 4; // the shape c8g3 holds 3
    assert_eq!(
        build(&mut layout, &st, &bad),
        (tm_status::TM_CONFIG_GUST_WINDOW, 0)
    );
    let mut bad = ch;
    bad[1].speed_channel = 1;
    assert_eq!(
        build(&mut layout, &st, &bad),
        (tm_status::TM_CONFIG_SPEED_LINK, 1)
    );
    let mut bad = ch;
    bad[0].screen.partner = -2;
    assert_eq!(
        build(&mut layout, &st, &bad),
        (tm_status::TM_CONFIG_CHANNEL_INDEX, 0)
    );
    let mut bad_st = st;
    bad_st.interval_s = 7;
    assert_eq!(
        build(&mut layout, &bad_st, &ch),
        (tm_status::TM_CONFIG_INTERVAL, 255)
    );
    // A refused build leaves no layout: a logger cannot start on it.
    let mut logger = block(TM_STATE_LOGGER_C8G3_SIZE);
    // SAFETY: live blocks of the sizes passed.
    let s = unsafe {
        tm_state_logger_start_c8g3(
            logger.as_mut_ptr().cast(),
            logger.len() * 8,
            layout.as_ptr().cast(),
        )
    };
    assert_eq!(s, tm_status::TM_ERR_NOT_READY);
    assert_eq!(build(&mut layout, &st, &ch), (tm_status::TM_OK, 255));
    // A layout of another shape is refused.
    // SAFETY: live blocks of the sizes passed.
    let s = unsafe {
        tm_state_logger_start_c8g12(
            logger.as_mut_ptr().cast(),
            logger.len() * 8,
            layout.as_ptr().cast(),
        )
    };
    assert_eq!(s, tm_status::TM_ERR_NOT_READY);
}

#[test]
fn a_day_through_the_interface_gives_frames_a_reader_accepts() {
    let (st, ch) = settings();
    let mut layout = block(TM_LAYOUT_C8G3_SIZE);
    assert_eq!(build(&mut layout, &st, &ch).0, tm_status::TM_OK);
    let (mut channels, mut fingerprint) = (0u8, 0u32);
    // SAFETY: live block and outputs.
    let s = unsafe { tm_layout_info(layout.as_ptr().cast(), &mut channels, &mut fingerprint) };
    assert_eq!((s, channels), (tm_status::TM_OK, 2));
    let mut logger = block(TM_RECORD_LOGGER_C8G3_SIZE);
    let lg = logger.as_mut_ptr().cast::<c_void>();
    let mut frames = [0u8; 2 * TM_FRAME_LEN];
    let mut res = tm_push_result::default();
    // SAFETY: every pointer is to a live value of the size passed, or NULL
    // where NULL is what is tested.
    unsafe {
        // Not started yet.
        let r = [
            reading(TM_READING_COUNTS, 500, 0.0),
            reading(TM_READING_VALUE, 0, 90.0),
        ];
        let s = tm_logger_push(
            lg,
            0,
            r.as_ptr(),
            2,
            frames.as_mut_ptr(),
            frames.len(),
            &mut res,
        );
        assert_eq!(s, tm_status::TM_ERR_NOT_READY);
        assert_eq!(
            tm_record_logger_start_c8g3(lg, logger.len() * 8, layout.as_ptr().cast()),
            tm_status::TM_OK
        );
        let t0 = 1_705_276_800_000i64; // 2024-01-15T00:00:00Z
                                       // Refused pushes change nothing.
        let s = tm_logger_push(
            lg,
            t0,
            r.as_ptr(),
            1,
            frames.as_mut_ptr(),
            frames.len(),
            &mut res,
        );
        assert_eq!(s, tm_status::TM_ERR_CHANNELS);
        let bad = [r[0], reading(9, 0, 0.0)];
        let s = tm_logger_push(
            lg,
            t0,
            bad.as_ptr(),
            2,
            frames.as_mut_ptr(),
            frames.len(),
            &mut res,
        );
        assert_eq!(s, tm_status::TM_ERR_READING);
        let s = tm_logger_push(
            lg,
            t0,
            r.as_ptr(),
            2,
            frames.as_mut_ptr(),
            TM_FRAME_LEN,
            &mut res,
        );
        assert_eq!(s, tm_status::TM_ERR_SIZE);
        let s = tm_logger_push(
            lg,
            t0,
            r.as_ptr(),
            2,
            ptr::null_mut(),
            frames.len(),
            &mut res,
        );
        assert_eq!(s, tm_status::TM_ERR_NULL);
        let s = tm_logger_push(
            lg,
            t0,
            r.as_ptr(),
            2,
            frames.as_mut_ptr(),
            frames.len(),
            ptr::null_mut(),
        );
        assert_eq!(s, tm_status::TM_ERR_NULL);
        let mut totals = tm_push_totals::default();
        assert_eq!(tm_logger_totals(lg, &mut totals), tm_status::TM_OK);
        assert_eq!(
            totals,
            tm_push_totals::default(),
            "a refused push counted a sample"
        );

        // 600 samples of one interval, then the first of the next closes it.
        let mut written = 0;
        for i in 0..=600i64 {
            let r = [
                reading(TM_READING_COUNTS, 500 + (i % 7) as i32, 0.0),
                reading(TM_READING_VALUE, 0, 90.0),
            ];
            let s = tm_logger_push(
                lg,
                t0 + i * 1000,
                r.as_ptr(),
                2,
                frames.as_mut_ptr(),
                frames.len(),
                &mut res,
            );
            assert_eq!((s, res.outcome), (tm_status::TM_OK, TM_ACCEPTED));
            written += res.frames;
            if i < 600 {
                assert_eq!(res.frames, 0);
            }
        }
        assert_eq!((written, res.interval_start_ms), (2, t0));
        for (ch, f) in frames.chunks_exact(TM_FRAME_LEN).enumerate() {
            let mut info = tm_frame_info::default();
            assert_eq!(
                tm_frame_check(f.as_ptr(), f.len(), &mut info),
                tm_status::TM_OK
            );
            assert_eq!(
                (
                    info.kind,
                    info.sequence,
                    info.channel as usize,
                    info.channels,
                    info.fingerprint
                ),
                (TM_FRAME_RECORD, ch as u32, ch, 2, fingerprint)
            );
            let frame = <&[u8; 128]>::try_from(f).unwrap();
            let rec = qc_core::wire::decode_record(frame).unwrap();
            assert_eq!(rec.record.tally.valid, 600);
        }
        let mut flipped = frames;
        flipped[40] ^= 1;
        assert_eq!(
            tm_frame_check(flipped.as_ptr(), TM_FRAME_LEN, ptr::null_mut()),
            tm_status::TM_ERR_FRAME
        );
        // A sample back in time is rejected and counted.
        let s = tm_logger_push(
            lg,
            t0,
            r.as_ptr(),
            2,
            frames.as_mut_ptr(),
            frames.len(),
            &mut res,
        );
        assert_eq!((s, res.outcome), (tm_status::TM_OK, TM_REJECTED_BACKWARD));
        let mut rec = tm_recovery::default();
        assert_eq!(tm_logger_recovery(lg, 0, &mut rec), tm_status::TM_OK);
        assert_eq!(
            (rec.since_start.valid, rec.since_start.possible),
            (600, 600)
        );
        assert_eq!((rec.month_year, rec.month), (2024, 1));
        assert_eq!(
            tm_logger_recovery(lg, 2, &mut rec),
            tm_status::TM_ERR_CHANNEL
        );
        assert_eq!(
            tm_logger_close(lg, frames.as_mut_ptr(), frames.len(), &mut res),
            tm_status::TM_OK
        );
        assert_eq!(res.frames, 2);

        // A state logger keeps no recovery.
        let mut states = block(TM_STATE_LOGGER_C8G3_SIZE);
        let sl = states.as_mut_ptr().cast::<c_void>();
        assert_eq!(
            tm_state_logger_start_c8g3(sl, states.len() * 8, layout.as_ptr().cast()),
            tm_status::TM_OK
        );
        assert_eq!(
            tm_logger_recovery(sl, 0, &mut rec),
            tm_status::TM_ERR_NO_RECOVERY
        );
    }
}

#[test]
fn crc32_and_messages() {
    let mut crc = 0u32;
    // SAFETY: live bytes and output.
    unsafe {
        // CRC-32/ISO-HDLC check value of "123456789": 0xCBF43926 (CRC RevEng
        // catalogue), the first four bytes and the rest run on.
        assert_eq!(tm_crc32(0, b"1234".as_ptr(), 4, &mut crc), tm_status::TM_OK);
        assert_eq!(
            tm_crc32(crc, b"56789".as_ptr(), 5, &mut crc),
            tm_status::TM_OK
        );
        assert_eq!(crc, 0xCBF4_3926);
        assert_eq!(tm_crc32(0, ptr::null(), 0, &mut crc), tm_status::TM_OK);
        assert_eq!(crc, 0);
        assert_eq!(
            tm_crc32(0, ptr::null(), 3, &mut crc),
            tm_status::TM_ERR_NULL
        );
    }
    for code in -1..120 {
        // SAFETY: tm_message returns a static NUL-terminated string.
        let m = unsafe { CStr::from_ptr(tm_message(code)) }
            .to_str()
            .unwrap();
        assert!(!m.is_empty());
    }
    // SAFETY: as above.
    let m = unsafe { CStr::from_ptr(tm_message(tm_status::TM_CONFIG_RANGE as i32)) };
    assert_eq!(m.to_str().unwrap(), "range must be finite with low <= high");
}

/// Runs a state logger of shape c8g3 on `layout` through two intervals of
/// a cup and a vane; the frames it wrote.
fn state_log(layout: &[u64]) -> Vec<u8> {
    let mut logger = block(TM_STATE_LOGGER_C8G3_SIZE);
    let lg = logger.as_mut_ptr().cast::<c_void>();
    let mut frames = [0u8; 2 * TM_FRAME_LEN];
    let mut res = tm_push_result::default();
    let mut log = Vec::new();
    // SAFETY: every pointer is to a live value of the size passed.
    unsafe {
        assert_eq!(
            tm_state_logger_start_c8g3(lg, logger.len() * 8, layout.as_ptr().cast()),
            tm_status::TM_OK
        );
        let t0 = 1_705_276_800_000i64; // 2024-01-15T00:00:00Z
        for i in 0..1300i64 {
            let r = [
                reading(TM_READING_COUNTS, 300 + (i * 37 % 500) as i32, 0.0),
                reading(TM_READING_VALUE, 0, (i * 7 % 360) as f64),
            ];
            let s = tm_logger_push(
                lg,
                t0 + i * 1000,
                r.as_ptr(),
                2,
                frames.as_mut_ptr(),
                frames.len(),
                &mut res,
            );
            assert_eq!(s, tm_status::TM_OK);
            log.extend_from_slice(&frames[..res.frames as usize * TM_FRAME_LEN]);
        }
    }
    log
}

#[test]
fn a_loaded_layout_image_is_the_built_layout() {
    let (st, ch) = settings();
    let mut built = block(TM_LAYOUT_C8G3_SIZE);
    assert_eq!(build(&mut built, &st, &ch), (tm_status::TM_OK, 255));
    let mut image = vec![0u8; TM_LAYOUT_IMAGE_MAX_SIZE];
    let mut n = 0usize;
    let mut loaded = block(TM_LAYOUT_C8G3_SIZE);
    let load = |mem: &mut [u64], image: &[u8]| {
        // SAFETY: live block and image of the sizes passed.
        unsafe {
            tm_layout_load_c8g3(
                mem.as_mut_ptr().cast(),
                mem.len() * 8,
                image.as_ptr(),
                image.len(),
            )
        }
    };
    // SAFETY: live blocks and outputs of the sizes passed.
    unsafe {
        assert_eq!(
            tm_layout_image(built.as_ptr().cast(), image.as_mut_ptr(), 100, &mut n),
            tm_status::TM_ERR_SIZE
        );
        assert_eq!(
            tm_layout_image(
                loaded.as_ptr().cast(),
                image.as_mut_ptr(),
                image.len(),
                &mut n
            ),
            tm_status::TM_ERR_NOT_READY
        );
        assert_eq!(
            tm_layout_image(
                built.as_ptr().cast(),
                image.as_mut_ptr(),
                image.len(),
                &mut n
            ),
            tm_status::TM_OK
        );
    }
    // At most 2,122 B for c8g3; each option that is none takes its tag
    // byte alone (layout image version 2), and this station leaves some none.
    assert!(n < 2122, "{n}");
    let image = &image[..n];
    assert_eq!(load(&mut loaded, image), tm_status::TM_OK);
    // The same channels and fingerprint, and a logger on it writes the same bytes.
    let info = |mem: &[u64]| {
        let (mut c, mut f) = (0u8, 0u32);
        // SAFETY: live block and outputs.
        let s = unsafe { tm_layout_info(mem.as_ptr().cast(), &mut c, &mut f) };
        (s, c, f)
    };
    assert_eq!(info(&loaded), info(&built));
    let log = state_log(&built);
    assert_eq!(log.len(), 2 * 2 * TM_FRAME_LEN);
    assert_eq!(state_log(&loaded), log);
    // Refused images leave a block that holds no layout.
    let mut bad = image.to_vec();
    bad[700] ^= 0x10;
    assert_eq!(load(&mut loaded, &bad), tm_status::TM_ERR_IMAGE_CRC);
    assert_eq!(info(&loaded).0, tm_status::TM_ERR_NOT_READY);
    let mut head = image.to_vec();
    head[9] ^= 0x01; // the fingerprint, covered by the outer CRC only
    assert_eq!(load(&mut loaded, &head), tm_status::TM_ERR_IMAGE_CRC);
    // One byte short: both CRCs are read from the wrong bytes.
    assert_eq!(
        load(&mut loaded, &image[..n - 1]),
        tm_status::TM_ERR_IMAGE_CRC
    );
    let mut long = image.to_vec();
    long.resize(2123, 0);
    assert_eq!(load(&mut loaded, &long), tm_status::TM_ERR_IMAGE);
    assert_eq!(load(&mut loaded, b"TMCI"), tm_status::TM_ERR_IMAGE);
    let mut other = block(TM_LAYOUT_C8G12_SIZE);
    // SAFETY: live block and image of the sizes passed.
    let s = unsafe {
        tm_layout_load_c8g12(
            other.as_mut_ptr().cast(),
            other.len() * 8,
            image.as_ptr(),
            image.len(),
        )
    };
    assert_eq!(s, tm_status::TM_ERR_IMAGE_SHAPE);
    assert_eq!(
        load(&mut loaded[..10], image),
        tm_status::TM_ERR_SIZE,
        "a block too short"
    );
    assert_eq!(load(&mut loaded, image), tm_status::TM_OK);
    // SAFETY: NULL image with a length: refused.
    let s = unsafe {
        tm_layout_load_c8g3(loaded.as_mut_ptr().cast(), loaded.len() * 8, ptr::null(), 5)
    };
    assert_eq!(s, tm_status::TM_ERR_NULL);
}
