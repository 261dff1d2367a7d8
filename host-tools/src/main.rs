fn main() {
    eprintln!("tidewire: command line not built yet");
    std::process::exit(2);
}
