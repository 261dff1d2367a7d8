//! One connection to a rig: requests out, replies in, matched by sequence number, with a
//! timeout. Frames are `tidewire_link` frames.

use std::io::{Read, Write};
use std::net::TcpStream;
use std::sync::mpsc::{channel, Receiver, RecvTimeoutError};
use std::time::{Duration, Instant};
use tidewire_link::{pack, unpack, LinkError, Reader, Reply, Request, MAX_WIRE, NO_SEQ, PROTOCOL_VERSION};

/// What went wrong talking to a rig.
#[derive(Debug, thiserror::Error)]
pub enum RigError {
    /// The address or device could not be opened.
    #[error("cannot reach the rig at {target}: {source}")]
    Connect { target: String, source: std::io::Error },
    /// Writing failed or the connection closed.
    #[error("the connection to the rig at {target} failed: {message}")]
    Io { target: String, message: String },
    /// No reply in time.
    #[error("the rig at {target} did not answer within {} ms (is it running, and is this its address?)", after.as_millis())]
    Timeout { target: String, after: Duration },
    /// The rig refused the request.
    #[error("the rig refused: {0}")]
    Refused(LinkError),
    /// The rig answered something this host did not expect.
    #[error("unexpected answer from the rig: {0}")]
    Protocol(String),
}

impl RigError {
    /// Exit code: 1 refused by the rig, 3 no answer or no connection.
    pub fn exit_code(&self) -> i32 {
        match self {
            RigError::Refused(_) | RigError::Protocol(_) => 1,
            _ => 3,
        }
    }
}

/// A connection to a rig.
pub struct RigConnection {
    target: String,
    writer: Box<dyn Write + Send>,
    bytes: Receiver<Vec<u8>>,
    reader: Reader,
    pending: Vec<u8>,
    seq: u16,
    timeout: Duration,
    /// The TCP stream, to shut down on drop (the reader thread holds a clone of it).
    tcp: Option<TcpStream>,
}

impl Drop for RigConnection {
    fn drop(&mut self) {
        // Ends the reader thread and frees the rig's port for the next client (an emulated
        // UART serves one connection at a time).
        if let Some(s) = &self.tcp {
            let _ = s.shutdown(std::net::Shutdown::Both);
        }
    }
}

impl RigConnection {
    /// Connect to `target`: `tcp:HOST:PORT` (or `HOST:PORT`) for a TCP address, anything
    /// else is a serial device path (a USB CDC serial port needs no line settings; for a
    /// UART adapter set its baud rate with the operating system first).
    pub fn open(target: &str, timeout: Duration) -> Result<Self, RigError> {
        let connect = |source| RigError::Connect { target: target.to_string(), source };
        let tcp = target.strip_prefix("tcp:").or_else(|| {
            let looks_tcp =
                !target.starts_with('/') && target.rsplit_once(':').is_some_and(|(_, p)| p.parse::<u16>().is_ok());
            looks_tcp.then_some(target)
        });
        let mut tcp_handle = None;
        let (reader, writer): (Box<dyn Read + Send>, Box<dyn Write + Send>) = match tcp {
            Some(addr) => {
                let addrs: Vec<_> = std::net::ToSocketAddrs::to_socket_addrs(addr).map_err(connect)?.collect();
                let first = addrs.first().ok_or_else(|| connect(std::io::Error::other("no address")))?;
                let s = TcpStream::connect_timeout(first, timeout).map_err(connect)?;
                let _ = s.set_nodelay(true);
                tcp_handle = Some(s.try_clone().map_err(connect)?);
                (Box::new(s.try_clone().map_err(connect)?), Box::new(s))
            }
            None => {
                let f = std::fs::OpenOptions::new().read(true).write(true).open(target).map_err(connect)?;
                (Box::new(f.try_clone().map_err(connect)?), Box::new(f))
            }
        };
        // Reads block; a thread hands the bytes over so every wait can have a timeout.
        let (tx, rx) = channel();
        let mut reader = reader;
        std::thread::spawn(move || {
            let mut buf = [0u8; 512];
            while let Ok(n) = reader.read(&mut buf) {
                if n == 0 || tx.send(buf[..n].to_vec()).is_err() {
                    break;
                }
            }
        });
        Ok(RigConnection {
            target: target.to_string(),
            writer,
            bytes: rx,
            reader: Reader::new(),
            pending: vec![],
            seq: 0,
            timeout,
            tcp: tcp_handle,
        })
    }

    /// Send one request and wait for its reply. A [`Reply::Error`] becomes
    /// [`RigError::Refused`].
    pub fn call(&mut self, req: &Request<'_>) -> Result<Reply, RigError> {
        match self.exchange(req)? {
            Reply::Error(e) => Err(RigError::Refused(e)),
            r => Ok(r),
        }
    }

    /// Send one request and return whatever the rig answered, error replies included.
    pub fn exchange(&mut self, req: &Request<'_>) -> Result<Reply, RigError> {
        self.seq = (self.seq + 1) % NO_SEQ;
        let mut wire = [0u8; MAX_WIRE];
        let n = pack(PROTOCOL_VERSION, self.seq, req, &mut wire)
            .map_err(|_| RigError::Protocol("request too large for one frame".into()))?;
        self.send_raw(&wire[..n])?;
        self.wait(Some(self.seq))
    }

    /// Send raw bytes (for tests of the rig's refusal of malformed frames).
    pub fn send_raw(&mut self, bytes: &[u8]) -> Result<(), RigError> {
        let io = |e: std::io::Error| RigError::Io { target: self.target.clone(), message: e.to_string() };
        self.writer.write_all(bytes).map_err(io)?;
        self.writer.flush().map_err(io)
    }

    /// Wait for the next reply with sequence number `seq` (None: any), skipping stale ones.
    pub fn wait(&mut self, seq: Option<u16>) -> Result<Reply, RigError> {
        let deadline = Instant::now() + self.timeout;
        loop {
            while !self.pending.is_empty() {
                let b = self.pending.remove(0);
                let Some(frame) = self.reader.push(b) else { continue };
                let frame = frame.map_err(|e| RigError::Protocol(format!("reply frame: {e}")))?;
                let f = unpack(frame).map_err(|e| RigError::Protocol(format!("reply frame: {e}")))?;
                let (reply, rest) = postcard::take_from_bytes::<Reply>(f.body)
                    .map_err(|_| RigError::Protocol("reply body does not decode (another protocol version?)".into()))?;
                if !rest.is_empty() {
                    return Err(RigError::Protocol("reply body has trailing bytes".into()));
                }
                if seq.is_none_or(|s| s == f.seq || f.seq == NO_SEQ) {
                    return Ok(reply);
                }
            }
            let left = deadline.saturating_duration_since(Instant::now());
            match self.bytes.recv_timeout(left) {
                Ok(b) => self.pending.extend(b),
                Err(RecvTimeoutError::Timeout) => {
                    return Err(RigError::Timeout { target: self.target.clone(), after: self.timeout })
                }
                Err(RecvTimeoutError::Disconnected) => {
                    return Err(RigError::Io {
                        target: self.target.clone(),
                        message: "connection closed by the rig".into(),
                    })
                }
            }
        }
    }
}
