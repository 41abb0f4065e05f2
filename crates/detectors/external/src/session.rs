//! One running program: the child process, one thread per pipe, and waits
//! that are all bounded by the trial's time budget.
//!
//! Why threads: the calling thread must never block on a pipe. A writer
//! thread owns the child's stdin, a reader thread owns its stdout and parses
//! it into whole answers, a third thread keeps the tail of its stderr. The
//! calling thread only ever blocks in `recv_timeout` (for at most the budget
//! left) or in short polls of the exit status, so a program that stops reading, stops
//! writing or never exits cannot hold it past its budget (see the crate doc
//! for the full argument).

use crate::protocol::{
    describe_bytes, MAX_BLOCK_VALUES, MAX_NAME_BYTES, PROGRAM_MAGIC, TAG_DONE, TAG_END, TAG_SCORE,
};
use echobench_core::Score;
use std::collections::VecDeque;
use std::io::{self, Read, Write};
use std::path::Path;
use std::process::{Child, ChildStderr, ChildStdin, ChildStdout, Command, ExitStatus, Stdio};
use std::sync::mpsc::{self, Receiver, RecvTimeoutError, SyncSender, TryRecvError, TrySendError};
use std::sync::{Arc, Condvar, Mutex};
use std::thread;
use std::time::{Duration, Instant};

/// Bytes of the child's stderr kept for failure messages.
const STDERR_TAIL_BYTES: usize = 4096;

/// Lines of that tail quoted in a failure message.
const STDERR_TAIL_LINES: usize = 8;

/// How long a program gets to exit by itself after END before it is killed.
const EXIT_GRACE: Duration = Duration::from_millis(200);

/// How long the host waits for the last stderr output of a dead program.
const STDERR_GRACE: Duration = Duration::from_millis(200);

/// How often the exit status is polled (std has no wait with a timeout).
const EXIT_POLL: Duration = Duration::from_millis(1);

/// What the reader thread saw on the program's stdout.
#[derive(Debug)]
pub(crate) enum FromProgram {
    /// The handshake reply.
    Ready {
        /// The protocol version the program speaks.
        version: u32,
        /// The name it gave (may be empty).
        name: String,
    },
    /// Every score up to a DONE.
    Answer(Vec<Score>),
    /// Bytes that break the protocol; the reader has stopped.
    Broken(String),
    /// Stdout ended cleanly between two messages; the reader has stopped.
    Closed,
}

/// The result of waiting for the program.
pub(crate) enum Wait {
    /// Something arrived.
    Got(FromProgram),
    /// The trial's time budget ran out first.
    TimedOut,
}

/// The last few KiB of the child's stderr, shared with the thread that reads it.
#[derive(Default)]
struct StderrTail {
    state: Mutex<TailState>,
    closed: Condvar,
}

#[derive(Default)]
struct TailState {
    bytes: VecDeque<u8>,
    closed: bool,
}

impl StderrTail {
    fn push(&self, data: &[u8]) {
        // A poisoned lock only means another thread panicked while holding
        // it; the bytes are still usable for a message.
        let mut state = self.state.lock().unwrap_or_else(|e| e.into_inner());
        state.bytes.extend(data);
        let excess = state.bytes.len().saturating_sub(STDERR_TAIL_BYTES);
        state.bytes.drain(..excess);
    }

    fn close(&self) {
        let mut state = self.state.lock().unwrap_or_else(|e| e.into_inner());
        state.closed = true;
        self.closed.notify_all();
    }

    /// Waits up to `limit` for stderr to end, then quotes its last lines.
    fn summary(&self, limit: Duration) -> String {
        let state = self.state.lock().unwrap_or_else(|e| e.into_inner());
        let (state, _) = self
            .closed
            .wait_timeout_while(state, limit, |s| !s.closed)
            .unwrap_or_else(|e| e.into_inner());
        let (front, back) = state.bytes.as_slices();
        let text = String::from_utf8_lossy(&[front, back].concat()).into_owned();
        let lines: Vec<&str> = text
            .lines()
            .map(str::trim_end)
            .filter(|l| !l.trim().is_empty())
            .collect();
        let start = lines.len().saturating_sub(STDERR_TAIL_LINES);
        if lines.is_empty() {
            "nothing on stderr".to_string()
        } else {
            format!("stderr: {}", lines[start..].join(" | "))
        }
    }
}

/// A spawned program and its pipe threads.
pub(crate) struct Session {
    child: Child,
    reaped: bool,
    to_writer: Option<SyncSender<Vec<u8>>>,
    spare_messages: Receiver<Vec<u8>>,
    from_reader: Receiver<FromProgram>,
    spare_answers: SyncSender<Vec<Score>>,
    stderr: Arc<StderrTail>,
    /// Waiting time the program may still cost this trial.
    budget: Duration,
}

/// How long a start waits for a program file that another process still holds open
/// for writing.
const BUSY_FILE_PATIENCE: Duration = Duration::from_secs(2);

/// Spawns `command`, retrying while the kernel answers "text file busy".
///
/// Why: a program written just before it is started (a team's build step, a test's
/// script) can be refused with ETXTBSY when any thread of this process forks in
/// the short window in which the written file's descriptor is still open: the forked
/// child holds a copy until it execs. The file is complete; waiting a few
/// milliseconds is the usual remedy (common practice); no other error is retried.
fn spawn_when_not_busy(command: &mut Command) -> io::Result<Child> {
    let started = Instant::now();
    let mut pause = Duration::from_millis(1);
    loop {
        match command.spawn() {
            Err(e)
                if e.kind() == io::ErrorKind::ExecutableFileBusy
                    && started.elapsed() < BUSY_FILE_PATIENCE =>
            {
                std::thread::sleep(pause);
                pause = (pause * 2).min(Duration::from_millis(50));
            }
            other => return other,
        }
    }
}

impl Session {
    /// Starts `path` with `args`, its three pipes and their threads; the
    /// host will wait for it `budget` in all.
    ///
    /// # Errors
    /// When the program cannot be started or a thread cannot be created.
    pub(crate) fn start(path: &Path, args: &[String], budget: Duration) -> io::Result<Session> {
        let mut child = spawn_when_not_busy(
            Command::new(path)
                .args(args)
                .stdin(Stdio::piped())
                .stdout(Stdio::piped())
                .stderr(Stdio::piped()),
        )?;
        match Self::attach(&mut child, budget) {
            Ok(session_parts) => Ok(session_parts.into_session(child)),
            Err(e) => {
                let _ = child.kill();
                let _ = child.wait();
                Err(e)
            }
        }
    }

    fn attach(child: &mut Child, budget: Duration) -> io::Result<Parts> {
        let missing = || io::Error::other("a pipe to the program was not created");
        let stdin = child.stdin.take().ok_or_else(missing)?;
        let stdout = child.stdout.take().ok_or_else(missing)?;
        let stderr_pipe = child.stderr.take().ok_or_else(missing)?;
        // Capacity 2: a message queued behind one the writer is still
        // writing is the most a well-behaved exchange ever needs (see `send`).
        let (to_writer, messages) = mpsc::sync_channel::<Vec<u8>>(2);
        let (return_message, spare_messages) = mpsc::sync_channel::<Vec<u8>>(2);
        let (to_host, from_reader) = mpsc::sync_channel::<FromProgram>(2);
        let (spare_answers, reusable_answers) = mpsc::sync_channel::<Vec<Score>>(2);
        let stderr = Arc::new(StderrTail::default());
        let tail = Arc::clone(&stderr);
        thread::Builder::new()
            .name("external-stdin".into())
            .spawn(move || write_program(stdin, &messages, &return_message))?;
        thread::Builder::new()
            .name("external-stdout".into())
            .spawn(move || read_program(stdout, &to_host, &reusable_answers))?;
        thread::Builder::new()
            .name("external-stderr".into())
            .spawn(move || keep_stderr(stderr_pipe, &tail))?;
        Ok(Parts {
            to_writer,
            spare_messages,
            from_reader,
            spare_answers,
            stderr,
            budget,
        })
    }

    /// The child's process id.
    pub(crate) fn id(&self) -> u32 {
        self.child.id()
    }

    /// An empty message buffer, reused from an earlier message when one has
    /// come back from the writer (so steady streaming does not allocate).
    pub(crate) fn message_buffer(&mut self) -> Vec<u8> {
        let mut buffer = self
            .spare_messages
            .try_recv()
            .unwrap_or_else(|_| Vec::with_capacity(8 + 4 * MAX_BLOCK_VALUES));
        buffer.clear();
        buffer
    }

    /// Hands a message to the writer thread without blocking.
    ///
    /// # Errors
    /// When the writer has stopped (the program closed its stdin or died) or
    /// already holds two unwritten messages: the program has answered blocks
    /// it has not read, which a program that follows the protocol cannot do.
    pub(crate) fn send(&self, message: Vec<u8>) -> Result<(), &'static str> {
        let Some(writer) = &self.to_writer else {
            return Err("its input is closed");
        };
        match writer.try_send(message) {
            Ok(()) => Ok(()),
            Err(TrySendError::Full(_)) => {
                Err("answered blocks without reading them (its input is not being read)")
            }
            Err(TrySendError::Disconnected(_)) => Err("stopped reading its input"),
        }
    }

    /// Waits for the next thing the program says, for at most the budget
    /// left, and charges the wait to the budget.
    pub(crate) fn receive(&mut self) -> Wait {
        if self.budget.is_zero() {
            return Wait::TimedOut;
        }
        let started = Instant::now();
        let outcome = self.from_reader.recv_timeout(self.budget);
        self.budget = self.budget.saturating_sub(started.elapsed());
        match outcome {
            Ok(message) => Wait::Got(message),
            Err(RecvTimeoutError::Timeout) => {
                self.budget = Duration::ZERO;
                Wait::TimedOut
            }
            // The reader always says why it stops, so this is only reached
            // after a Broken or Closed was already taken.
            Err(RecvTimeoutError::Disconnected) => Wait::Got(FromProgram::Closed),
        }
    }

    /// Something the program said that nobody asked for yet, if any.
    pub(crate) fn unsolicited(&self) -> Option<FromProgram> {
        match self.from_reader.try_recv() {
            Ok(message) => Some(message),
            Err(TryRecvError::Empty) => None,
            Err(TryRecvError::Disconnected) => Some(FromProgram::Closed),
        }
    }

    /// Gives an answer's buffer back to the reader for the next answer.
    pub(crate) fn recycle(&self, mut answer: Vec<Score>) {
        answer.clear();
        let _ = self.spare_answers.try_send(answer);
    }

    /// Waits up to `limit` for the program to exit.
    pub(crate) fn wait_exit(&mut self, limit: Duration) -> Option<ExitStatus> {
        let until = Instant::now() + limit;
        loop {
            match self.child.try_wait() {
                Ok(Some(status)) => {
                    self.reaped = true;
                    return Some(status);
                }
                Ok(None) if Instant::now() < until => thread::sleep(EXIT_POLL),
                _ => return None,
            }
        }
    }

    /// Kills the program (if still running) and reaps it.
    pub(crate) fn kill(&mut self) {
        self.to_writer = None;
        if !self.reaped {
            let _ = self.child.kill();
            let _ = self.child.wait();
            self.reaped = true;
        }
    }

    /// Quotes the end of the program's stderr (waiting briefly for its last words).
    pub(crate) fn stderr_summary(&self) -> String {
        self.stderr.summary(STDERR_GRACE)
    }

    /// Ends the conversation politely: END, stdin closed, a short grace to
    /// exit by itself, then kill. Always reaps.
    pub(crate) fn close(&mut self) {
        if let Some(writer) = self.to_writer.take() {
            let mut message = self.message_buffer();
            message.extend_from_slice(&TAG_END);
            // Dropping `writer` after this lets the writer thread finish and
            // close the pipe, so the program also sees end of input.
            let _ = writer.try_send(message);
        }
        if !self.reaped {
            let _ = self.wait_exit(EXIT_GRACE);
        }
        self.kill();
    }
}

impl Drop for Session {
    fn drop(&mut self) {
        self.close();
    }
}

/// The channels of a session, before the child is moved in.
struct Parts {
    to_writer: SyncSender<Vec<u8>>,
    spare_messages: Receiver<Vec<u8>>,
    from_reader: Receiver<FromProgram>,
    spare_answers: SyncSender<Vec<Score>>,
    stderr: Arc<StderrTail>,
    budget: Duration,
}

impl Parts {
    fn into_session(self, child: Child) -> Session {
        Session {
            child,
            reaped: false,
            to_writer: Some(self.to_writer),
            spare_messages: self.spare_messages,
            from_reader: self.from_reader,
            spare_answers: self.spare_answers,
            stderr: self.stderr,
            budget: self.budget,
        }
    }
}

/// The writer thread: writes each message whole, then returns its buffer.
fn write_program(mut stdin: ChildStdin, messages: &Receiver<Vec<u8>>, spare: &SyncSender<Vec<u8>>) {
    while let Ok(message) = messages.recv() {
        if stdin
            .write_all(&message)
            .and_then(|()| stdin.flush())
            .is_err()
        {
            // The program closed its input or died; the reader reports it.
            return;
        }
        let _ = spare.try_send(message);
    }
    // The host hung up: dropping `stdin` here gives the program end of input.
}

/// The stderr thread: keeps the tail until the pipe ends.
fn keep_stderr(mut pipe: ChildStderr, tail: &StderrTail) {
    let mut chunk = [0u8; 1024];
    loop {
        match pipe.read(&mut chunk) {
            Ok(0) | Err(_) => break,
            Ok(n) => tail.push(&chunk[..n]),
        }
    }
    tail.close();
}

/// How a fixed-size read ended.
enum Filled {
    All,
    /// End of stream before the first byte.
    Nothing,
    /// End of stream after this many bytes.
    Part(usize),
}

fn fill(reader: &mut impl Read, buffer: &mut [u8]) -> io::Result<Filled> {
    let mut got = 0;
    while got < buffer.len() {
        match reader.read(&mut buffer[got..]) {
            Ok(0) if got == 0 => return Ok(Filled::Nothing),
            Ok(0) => return Ok(Filled::Part(got)),
            Ok(n) => got += n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(Filled::All)
}

/// The reader thread: parses stdout until it ends or breaks the protocol,
/// and forwards the handshake and every complete answer.
fn read_program(
    stdout: ChildStdout,
    to_host: &SyncSender<FromProgram>,
    spare: &Receiver<Vec<Score>>,
) {
    let mut reader = io::BufReader::with_capacity(64 * 1024, stdout);
    let last = match parse_stream(&mut reader, to_host, spare) {
        Ok(last) => last,
        Err(e) => FromProgram::Broken(format!("reading its output failed: {e}")),
    };
    let _ = to_host.send(last);
}

/// Reads a field of `N` bytes; `what` names it in the message for a short read.
fn field<const N: usize>(
    reader: &mut impl Read,
    what: &str,
) -> io::Result<Result<[u8; N], FromProgram>> {
    let mut bytes = [0u8; N];
    Ok(match fill(reader, &mut bytes)? {
        Filled::All => Ok(bytes),
        Filled::Nothing | Filled::Part(_) => Err(FromProgram::Broken(format!(
            "its output ended in the middle of {what}"
        ))),
    })
}

/// Parses everything; returns the final event (Broken or Closed). Stops
/// early, returning Closed, when the host has gone away.
fn parse_stream(
    reader: &mut impl Read,
    to_host: &SyncSender<FromProgram>,
    spare: &Receiver<Vec<Score>>,
) -> io::Result<FromProgram> {
    // READY: magic, version, name length, name.
    let mut magic = [0u8; 4];
    match fill(reader, &mut magic)? {
        Filled::All => {}
        Filled::Nothing => return Ok(FromProgram::Closed),
        Filled::Part(n) => {
            return Ok(FromProgram::Broken(format!(
                "its output ended after {} of the 4 bytes of its handshake reply",
                n
            )))
        }
    }
    if magic != PROGRAM_MAGIC {
        return Ok(FromProgram::Broken(format!(
            "replied to the handshake with {} instead of \"EBXP\" (not a program speaking the \
             echobench external protocol, or it printed text to stdout)",
            describe_bytes(&magic)
        )));
    }
    let version = match field::<4>(reader, "its handshake reply")? {
        Ok(b) => u32::from_le_bytes(b),
        Err(e) => return Ok(e),
    };
    let name_len = match field::<4>(reader, "its handshake reply")? {
        Ok(b) => u32::from_le_bytes(b) as usize,
        Err(e) => return Ok(e),
    };
    if name_len > MAX_NAME_BYTES {
        return Ok(FromProgram::Broken(format!(
            "announced a name of {name_len} bytes in its handshake reply (at most {MAX_NAME_BYTES})"
        )));
    }
    let mut name = vec![0u8; name_len];
    match fill(reader, &mut name)? {
        Filled::All => {}
        Filled::Nothing | Filled::Part(_) => {
            return Ok(FromProgram::Broken(
                "its output ended in the middle of its name".to_string(),
            ))
        }
    }
    let name = String::from_utf8_lossy(&name).into_owned();
    if to_host.send(FromProgram::Ready { version, name }).is_err() {
        return Ok(FromProgram::Closed);
    }
    // Answers: SCOR records up to DONE.
    let mut answer = Vec::with_capacity(MAX_BLOCK_VALUES);
    loop {
        let mut tag = [0u8; 4];
        match fill(reader, &mut tag)? {
            Filled::All => {}
            Filled::Nothing if answer.is_empty() => return Ok(FromProgram::Closed),
            Filled::Nothing => {
                return Ok(FromProgram::Broken(format!(
                    "its output ended after {} scores without the DONE that ends an answer",
                    answer.len()
                )))
            }
            Filled::Part(n) => {
                return Ok(FromProgram::Broken(format!(
                    "its output ended after {n} bytes of a 4-byte message tag"
                )))
            }
        }
        if tag == TAG_SCORE {
            let record = match field::<16>(reader, "a SCOR record")? {
                Ok(b) => b,
                Err(e) => return Ok(e),
            };
            let (t_bytes, value_bytes) = record.split_at(8);
            let mut t = [0u8; 8];
            let mut v = [0u8; 8];
            t.copy_from_slice(t_bytes);
            v.copy_from_slice(value_bytes);
            // A block of at most MAX_BLOCK_VALUES values ends at most that
            // many frames; more means the program is not answering blocks,
            // and buffering without bound would let it exhaust our memory.
            if answer.len() == MAX_BLOCK_VALUES {
                return Ok(FromProgram::Broken(format!(
                    "sent more than {MAX_BLOCK_VALUES} scores without a DONE"
                )));
            }
            answer.push(Score {
                t_s: f64::from_le_bytes(t),
                value: f64::from_le_bytes(v),
            });
        } else if tag == TAG_DONE {
            let next = spare
                .try_recv()
                .unwrap_or_else(|_| Vec::with_capacity(MAX_BLOCK_VALUES));
            let complete = std::mem::replace(&mut answer, next);
            if to_host.send(FromProgram::Answer(complete)).is_err() {
                return Ok(FromProgram::Closed);
            }
        } else {
            return Ok(FromProgram::Broken(format!(
                "wrote {} where a message tag (SCOR or DONE) was expected (anything printed to \
                 stdout breaks the protocol: log to stderr)",
                describe_bytes(&tag)
            )));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(bytes: &[u8]) -> Vec<FromProgram> {
        let (to_host, from_reader) = mpsc::sync_channel(64);
        let (_spare_in, spare) = mpsc::sync_channel(2);
        let last = parse_stream(&mut &bytes[..], &to_host, &spare).expect("in memory");
        let mut events: Vec<FromProgram> = from_reader.try_iter().collect();
        events.push(last);
        events
    }

    fn ready(name: &str) -> Vec<u8> {
        let mut bytes = b"EBXP".to_vec();
        bytes.extend(1u32.to_le_bytes());
        bytes.extend((name.len() as u32).to_le_bytes());
        bytes.extend(name.as_bytes());
        bytes
    }

    fn score(t_s: f64, value: f64) -> Vec<u8> {
        let mut bytes = b"SCOR".to_vec();
        bytes.extend(t_s.to_le_bytes());
        bytes.extend(value.to_le_bytes());
        bytes
    }

    #[test]
    fn parses_a_handshake_and_answers() {
        let mut bytes = ready("demo");
        bytes.extend(score(0.5, 2.0));
        bytes.extend(score(0.75, 3.0));
        bytes.extend(b"DONE");
        bytes.extend(b"DONE");
        let events = parse(&bytes);
        assert!(
            matches!(&events[0], FromProgram::Ready { version: 1, name } if name == "demo"),
            "{events:?}"
        );
        match &events[1] {
            FromProgram::Answer(scores) => assert_eq!(
                scores,
                &[
                    Score {
                        t_s: 0.5,
                        value: 2.0
                    },
                    Score {
                        t_s: 0.75,
                        value: 3.0
                    }
                ]
            ),
            other => panic!("{other:?}"),
        }
        assert!(matches!(&events[2], FromProgram::Answer(s) if s.is_empty()));
        assert!(matches!(events[3], FromProgram::Closed));
        assert_eq!(events.len(), 4);
    }

    #[test]
    fn names_each_way_of_breaking_the_protocol() {
        let broken = |bytes: &[u8]| match parse(bytes).pop() {
            Some(FromProgram::Broken(message)) => message,
            other => panic!("{other:?}"),
        };
        assert!(broken(b"hello\n").contains("\"hell\""));
        assert!(broken(b"EB").contains("2 of the 4 bytes"));
        let mut long_name = b"EBXP\x01\0\0\0".to_vec();
        long_name.extend(1000u32.to_le_bytes());
        assert!(broken(&long_name).contains("1000 bytes"));
        let mut text = ready("");
        text.extend(b"frame 3 ok\n");
        assert!(broken(&text).contains("log to stderr"));
        let mut short = ready("");
        short.extend(&score(0.1, 1.0)[..10]);
        assert!(broken(&short).contains("middle of a SCOR record"));
        let mut unfinished = ready("");
        unfinished.extend(score(0.1, 1.0));
        assert!(broken(&unfinished).contains("without the DONE"));
        let mut flood = ready("");
        for _ in 0..=MAX_BLOCK_VALUES {
            flood.extend(score(0.1, 1.0));
        }
        assert!(broken(&flood).contains("more than 4096 scores"));
    }

    #[test]
    fn stderr_tail_keeps_the_last_lines_only() {
        let tail = StderrTail::default();
        for i in 0..2000 {
            tail.push(format!("line {i}\n").as_bytes());
        }
        tail.close();
        let summary = tail.summary(Duration::ZERO);
        assert!(summary.starts_with("stderr: line 1992 | "), "{summary}");
        assert!(summary.ends_with("line 1999"), "{summary}");
        assert_eq!(
            StderrTail::default().summary(Duration::ZERO),
            "nothing on stderr"
        );
    }
}
