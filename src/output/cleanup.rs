//! Removing this process's staging folders and stopping its typesetter children when it is
//! interrupted (SIGINT, SIGTERM, SIGHUP).
//!
//! The signal handler itself only writes the signal number to a pipe (write(2) is
//! async-signal-safe, POSIX.1-2017 §2.4.3); a watcher thread reads it, kills the registered
//! child process groups, removes the registered folders (only folders this process created),
//! then restores the default action and raises the signal again, so the exit status is the
//! usual "killed by SIGINT" one. libc is used directly for the few calls needed rather than a
//! signal crate: it is already in the dependency tree and the code is a dozen lines.

use std::path::{Path, PathBuf};
use std::sync::Mutex;

static FOLDERS: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
static CHILDREN: Mutex<Vec<i32>> = Mutex::new(Vec::new());
/// Set once an interrupt is being handled: a child started after that is killed at once.
static STOPPING: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Whether an interrupt is being handled: the process is about to end by that signal, so an
/// error the clean-up caused (its folder vanished) is not worth reporting.
pub fn is_stopping() -> bool {
    STOPPING.load(std::sync::atomic::Ordering::SeqCst)
}

/// Registers a folder to remove on a signal.
pub fn register_folder(path: &Path) {
    if let Ok(mut f) = FOLDERS.lock() {
        f.push(path.to_path_buf());
    }
}

/// Forgets a folder (removed, or renamed into place).
pub fn unregister_folder(path: &Path) {
    if let Ok(mut f) = FOLDERS.lock() {
        f.retain(|p| p != path);
    }
}

/// Registers a child that leads its own process group, to kill on a signal.
pub fn register_child(pid: u32) {
    install();
    if let (Ok(mut c), Ok(pid)) = (CHILDREN.lock(), i32::try_from(pid)) {
        c.push(pid);
    }
    if STOPPING.load(std::sync::atomic::Ordering::SeqCst) {
        kill_group(pid);
    }
}

/// Forgets a child (it was waited for).
pub fn unregister_child(pid: u32) {
    if let (Ok(mut c), Ok(pid)) = (CHILDREN.lock(), i32::try_from(pid)) {
        c.retain(|p| *p != pid);
    }
}

/// Kills the process group led by `pid` (the child and anything it started).
pub fn kill_group(pid: u32) {
    #[cfg(unix)]
    if let Ok(pid) = i32::try_from(pid) {
        // SAFETY: kill(2) with a negative pid signals a process group; no memory is involved.
        unsafe {
            libc::kill(-pid, libc::SIGKILL);
        }
    }
    #[cfg(not(unix))]
    let _ = pid;
}

/// Installs the handlers once per process.
pub fn install() {
    #[cfg(unix)]
    {
        static ONCE: std::sync::Once = std::sync::Once::new();
        ONCE.call_once(unix::install);
    }
}

fn clean_up() {
    STOPPING.store(true, std::sync::atomic::Ordering::SeqCst);
    let children: Vec<i32> = CHILDREN.lock().map(|c| c.clone()).unwrap_or_default();
    for pid in children {
        kill_group(pid.unsigned_abs());
    }
    let folders: Vec<PathBuf> = FOLDERS.lock().map(|f| f.clone()).unwrap_or_default();
    for folder in folders {
        // A killed typesetter may still be closing its files: try a few times.
        for _ in 0..20 {
            if std::fs::remove_dir_all(&folder).is_ok() || !folder.exists() {
                break;
            }
            std::thread::sleep(std::time::Duration::from_millis(10));
        }
    }
}

#[cfg(unix)]
mod unix {
    use std::sync::atomic::{AtomicI32, Ordering};

    static PIPE_WRITE: AtomicI32 = AtomicI32::new(-1);

    extern "C" fn on_signal(signal: libc::c_int) {
        let fd = PIPE_WRITE.load(Ordering::SeqCst);
        if fd >= 0 {
            let byte = u8::try_from(signal).unwrap_or(0);
            // SAFETY: write(2) is async-signal-safe; the buffer is a live local byte.
            unsafe {
                libc::write(fd, (&raw const byte).cast(), 1);
            }
        }
    }

    pub(super) fn install() {
        let mut fds = [0 as libc::c_int; 2];
        // SAFETY: pipe(2) fills the two-element array.
        if unsafe { libc::pipe(fds.as_mut_ptr()) } != 0 {
            return;
        }
        let [read, write] = fds;
        PIPE_WRITE.store(write, Ordering::SeqCst);
        let spawned = std::thread::Builder::new()
            .name("plateau-signals".into())
            .spawn(move || {
                let mut byte = 0u8;
                // The handler may run on this very thread and interrupt the read (EINTR): read
                // again until the byte is there.
                loop {
                    // SAFETY: read(2) into a live local byte.
                    let n = unsafe { libc::read(read, (&raw mut byte).cast(), 1) };
                    if n == 1 {
                        break;
                    }
                    if n == 0
                        || std::io::Error::last_os_error().kind() != std::io::ErrorKind::Interrupted
                    {
                        return;
                    }
                }
                super::clean_up();
                let signal = libc::c_int::from(byte);
                // SAFETY: restoring the default action and raising the signal ends the process
                // with the conventional status for that signal.
                unsafe {
                    libc::signal(signal, libc::SIG_DFL);
                    libc::raise(signal);
                }
                std::process::exit(128 + signal);
            });
        if spawned.is_err() {
            return;
        }
        for signal in [libc::SIGINT, libc::SIGTERM, libc::SIGHUP] {
            // SAFETY: a zeroed sigaction with a plain handler and an empty mask is valid.
            unsafe {
                let mut action: libc::sigaction = std::mem::zeroed();
                action.sa_sigaction = on_signal as *const () as libc::sighandler_t;
                action.sa_flags = libc::SA_RESTART;
                libc::sigemptyset(&raw mut action.sa_mask);
                libc::sigaction(signal, &raw const action, std::ptr::null_mut());
            }
        }
    }
}
