//! Semihosting output without `core::fmt`: text and hexadecimal digits written by hand, so no
//! formatting machinery (and none of its panic paths) is linked in.
use cortex_m_semihosting::hio::{self, HostStream};

/// The host's standard output, if the debugger side answers.
pub struct Out(Option<HostStream>);

impl Out {
    /// Open the semihosting stdout (output is dropped if that fails).
    pub fn open() -> Self {
        Out(hio::hstdout().ok())
    }

    /// Write text.
    pub fn str(&mut self, s: &str) -> &mut Self {
        if let Some(h) = self.0.as_mut() {
            let _ = h.write_all(s.as_bytes());
        }
        self
    }

    /// Write ` ` then `v` as 8 lowercase hex digits.
    pub fn hex(&mut self, v: u32) -> &mut Self {
        let mut buf = [b' '; 9];
        for (i, d) in buf.iter_mut().skip(1).enumerate() {
            let nib = (v >> (28 - 4 * i as u32)) & 0xf;
            *d = if nib < 10 { b'0' + nib as u8 } else { b'a' + nib as u8 - 10 };
        }
        if let Some(h) = self.0.as_mut() {
            let _ = h.write_all(&buf);
        }
        self
    }

    /// Write a space then a word.
    pub fn word(&mut self, s: &str) -> &mut Self {
        self.str(" ").str(s)
    }

    /// End the line.
    pub fn nl(&mut self) {
        self.str("\n");
    }
}
