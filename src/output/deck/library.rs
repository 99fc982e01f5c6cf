//! The devices of a deck as a model library must serve them: every transistor of the gate and
//! of the reference inverter, with its model's name, drawn finger width and length.

use crate::figures::CellFigures;
use crate::models::{DeviceType, DeviceUse};
use crate::network::NetworkKind;

use super::physics::reference_devices;

/// Every device the deck draws, with the NMOS and PMOS models' names `models`.
pub fn device_uses(gate: &CellFigures, models: [&str; 2]) -> Vec<DeviceUse> {
    let length_m = gate.process.length_nm * 1e-9;
    let device = |kind: NetworkKind| match kind {
        NetworkKind::PullDown => (DeviceType::Nmos, models[0]),
        NetworkKind::PullUp => (DeviceType::Pmos, models[1]),
    };
    let mut uses: Vec<DeviceUse> = gate
        .transistors
        .iter()
        .map(|transistor| {
            let (device, model) = device(transistor.network);
            DeviceUse {
                label: format!("{} of {}", transistor.name, gate.name),
                model: model.to_string(),
                device,
                width_m: transistor.finger_width_um * 1e-6,
                length_m,
            }
        })
        .collect();
    for (name, kind, (_, finger_nm)) in [
        ("MN1", NetworkKind::PullDown, reference_devices(gate)[0]),
        ("MP1", NetworkKind::PullUp, reference_devices(gate)[1]),
    ] {
        let (device, model) = device(kind);
        uses.push(DeviceUse {
            label: format!("{name} of {}_reference", gate.name),
            model: model.to_string(),
            device,
            width_m: finger_nm * 1e-9,
            length_m,
        });
    }
    uses
}
