fn main() -> std::process::ExitCode {
    voicekeep::cli::run(std::env::args_os())
}
