//! The `tidewire` command: see `tidewire --help`.
fn main() {
    std::process::exit(tidewire_host::cli::main());
}
