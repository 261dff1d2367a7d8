//! tidewire host tools: plant files, the physics compiler, floating-point references,
//! verification and plots, the plant from a captured step response (`extract`), the host end
//! of the rig's control link (`rig`) and the streamed run file (`runfile`). Everything that
//! needs `std` or floating point lives here; the real-time solver is `tidewire-core`. The
//! stages and who imports whom: `DEVELOPERS.md`, "Layout".
pub mod analysis;
pub mod cli;
pub mod compile;
pub mod emit;
pub mod extract;
pub mod files;
pub mod host_core;

pub mod plant;
pub mod plot;
pub mod reference;
pub mod rig;
pub mod runfile;
pub mod si;
pub mod twin;
pub mod verify;
