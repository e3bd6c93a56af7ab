// mimalloc: evaluations of many items allocate and free many small blocks;
// it is faster at that than the system allocator (measured in the README's
// table-of-items figures).
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() -> std::process::ExitCode {
    incertus_cli::run()
}
