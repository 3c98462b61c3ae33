//! Reading keys from the terminal, and noticing when the terminal has gone away.
//!
//! Why not crossterm's event reader: when the terminal behind it closes (an SSH connection
//! drops, a multiplexer session is killed) every read fails at once, and that reader retries
//! forever inside its own poll — the process spins on a core and never returns to the loop that
//! would see the hang-up. Here one `poll(2)` with a timeout waits on the terminal; a hang-up,
//! an error, end of input or a failing read is reported as [`Gone`], and the loop ends.
//! Window size changes arrive as SIGWINCH and are reported as [`Input::Resized`].

mod keys;

pub use keys::KeyDecoder;

use crossterm::event::KeyEvent;
use std::io;
use std::os::fd::RawFd;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Duration;

/// The terminal cannot be read any more; the text says how it was noticed.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("the terminal went away ({0})")]
pub struct Gone(pub String);

/// What one wait for input brought.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Input {
    /// Keys, in the order typed.
    Keys(Vec<KeyEvent>),
    /// The window changed size.
    Resized,
    /// Nothing before the timeout, or a signal interrupted the wait.
    Nothing,
}

/// The reviewer's terminal input: standard input, which `review` requires to be a terminal.
pub struct TtyInput {
    fd: RawFd,
    decoder: KeyDecoder,
    resized: Arc<AtomicBool>,
}

impl TtyInput {
    /// Read from standard input; watch SIGWINCH for size changes.
    pub fn stdin() -> io::Result<Self> {
        let resized = Arc::new(AtomicBool::new(false));
        signal_hook::flag::register(signal_hook::consts::SIGWINCH, Arc::clone(&resized))?;
        Ok(TtyInput {
            fd: libc::STDIN_FILENO,
            decoder: KeyDecoder::default(),
            resized,
        })
    }

    /// Wait up to `timeout` for input. Never busy-waits: a terminal that keeps failing is
    /// [`Gone`] on the first failure, not retried.
    pub fn wait(&mut self, timeout: Duration) -> Result<Input, Gone> {
        if self.resized.swap(false, Ordering::Relaxed) {
            return Ok(Input::Resized);
        }
        let mut pfd = libc::pollfd {
            fd: self.fd,
            events: libc::POLLIN,
            revents: 0,
        };
        let ms = timeout.as_millis().min(i32::MAX as u128) as i32;
        // SAFETY: one valid pollfd, count 1.
        let n = unsafe { libc::poll(&mut pfd, 1, ms) };
        if n < 0 {
            let e = io::Error::last_os_error();
            return match e.kind() {
                // A signal: the caller looks at its flags (hang-up, resize) and comes back.
                io::ErrorKind::Interrupted => Ok(if self.resized.swap(false, Ordering::Relaxed) {
                    Input::Resized
                } else {
                    Input::Nothing
                }),
                _ => Err(Gone(format!("poll: {e}"))),
            };
        }
        if n == 0 {
            return Ok(match self.decoder.flush() {
                Some(k) => Input::Keys(vec![k]),
                None => Input::Nothing,
            });
        }
        if pfd.revents & (libc::POLLERR | libc::POLLNVAL) != 0 {
            return Err(Gone("error on the terminal".into()));
        }
        if pfd.revents & libc::POLLIN == 0 {
            // POLLHUP with nothing left to read: the other end is closed.
            return Err(Gone("hang-up".into()));
        }
        self.read_keys()
    }

    fn read_keys(&mut self) -> Result<Input, Gone> {
        let mut buf = [0u8; 1024];
        // SAFETY: reading into a buffer of the given length.
        let n = unsafe { libc::read(self.fd, buf.as_mut_ptr().cast(), buf.len()) };
        if n < 0 {
            let e = io::Error::last_os_error();
            return match e.kind() {
                io::ErrorKind::Interrupted | io::ErrorKind::WouldBlock => Ok(Input::Nothing),
                _ => Err(Gone(format!("read: {e}"))),
            };
        }
        if n == 0 {
            return Err(Gone("end of input".into()));
        }
        let n = n as usize;
        let keys = self.decoder.feed(&buf[..n], n == buf.len());
        Ok(if keys.is_empty() {
            Input::Nothing
        } else {
            Input::Keys(keys)
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::os::fd::AsRawFd;

    fn pipe_input() -> (TtyInput, std::os::unix::net::UnixStream) {
        let (ours, theirs) = std::os::unix::net::UnixStream::pair().unwrap();
        let input = TtyInput {
            fd: ours.as_raw_fd(),
            decoder: KeyDecoder::default(),
            resized: Arc::new(AtomicBool::new(false)),
        };
        std::mem::forget(ours); // the fd stays open for the input's lifetime
        (input, theirs)
    }

    #[test]
    fn keys_then_end_of_input_is_gone_not_a_spin() {
        use std::io::Write;
        let (mut input, mut other) = pipe_input();
        other.write_all(b"jq").unwrap();
        match input.wait(Duration::from_millis(500)).unwrap() {
            Input::Keys(k) => assert_eq!(k.len(), 2),
            other => panic!("expected keys, got {other:?}"),
        }
        assert_eq!(
            input.wait(Duration::from_millis(10)).unwrap(),
            Input::Nothing
        );
        drop(other);
        // Every later wait answers at once with Gone: the loop ends instead of retrying.
        for _ in 0..3 {
            assert!(input.wait(Duration::from_secs(5)).is_err());
        }
    }
}
