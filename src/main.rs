fn main() -> std::process::ExitCode {
    incertus_cli::run()
}
