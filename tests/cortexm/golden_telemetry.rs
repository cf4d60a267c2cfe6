// Golden values of the telemetry cases in tests/on_target.rs, written by the
// host build:
//     HUMSENSE_BLESS=1 cargo test --test on_target --features telemetry
// Do not edit by hand; the on-target runs must match them byte for byte.

use crate::telemetry_case::TelGolden;

/// One entry per case, in `telemetry_case::TEL_CASES` order.
pub const TELEMETRY: &[TelGolden] = &[
    TelGolden {
        name: "tel_u16_1ch",
        frames: 4000,
        input_hash: 0x0edb681368a223a9,
        bytes: 8442,
        records: 119,
        stream_hash: 0xdd93c62d63fd37bc,
        checks: &[
            0x7176f3b54d21693b,
            0xb2bf73b1289ea7fc,
            0x97c93f538525b14c,
            0xa8053716e07bbf32,
        ],
        dropped_records: 13,
        dropped_frames: 416,
    },
    TelGolden {
        name: "tel_i16_3ch",
        frames: 5000,
        input_hash: 0x499318f1225e053c,
        bytes: 27014,
        records: 119,
        stream_hash: 0xb5cad5c84adc2cec,
        checks: &[
            0x8a7ccbd77261d742,
            0x0d48cf52caaa3e35,
            0x9ce2736044e52862,
            0x548bb362b6dc9250,
            0x15047d27eb4622e1,
            0xba9ff8bfd35b9d4e,
            0x9b52ce4e9b20189e,
            0x50634abd7c28fda1,
            0xc6f358bd799d1aee,
            0x7499080f0a4c9e27,
            0xc4476c9d7e3d8a34,
            0xfc804fbfe4037fc2,
            0x33bfd4d9473be6e9,
        ],
        dropped_records: 18,
        dropped_frames: 720,
    },
];
