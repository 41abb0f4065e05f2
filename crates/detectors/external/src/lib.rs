//! External detectors: any executable, run as a child process and spoken to
//! over its stdin/stdout, scored like a built-in detector.
//!
//! Sensor teams prototype detectors in Python, or build their firmware's C
//! as a host test program. This crate runs such a program for each trial,
//! feeds it the trial's samples and collects its scores, so the harness
//! compares it with the built-in detectors on the same trials and the same
//! alarm logic. A Python helper ships beside the crate
//! (`python/echobench_external.py`, numpy only) so that a Python detector is
//! one function from a block of frames to their scores; an example,
//! `python/energy_detector.py`, reproduces the built-in `energy` detector.
//!
//! **The one design decision: a strict request–answer exchange with bounded
//! blocks, over pipe threads, under one time budget per trial.** echobench
//! sends one block and waits for that block's answer before it sends the
//! next, so the program is always either computing, or waiting for input it
//! has been promised. The host's pipe ends are owned by threads that never
//! stop reading (stdout, stderr) or that write on their own (stdin), and the
//! calling thread only waits for as long as the trial's budget has left,
//! after which the program is killed. That rules out both classic pipe
//! deadlocks (below) and makes a hung program cost at most `timeout_s`.
//!
//! # Running programs must be allowed
//!
//! [`ExternalPlugin::new`]`(allow_exec)` takes the user's consent: the
//! command line passes `true` only with `--allow-exec`. Without it, `plan`
//! and `check` refuse with a [`ParamError`] on `command` that says so, so a
//! suite file from an untrusted branch cannot start programs on a CI machine
//! by itself (and the suite loader, which calls `check`, reports it before any
//! trial runs).
//!
//! # Parameters
//!
//! | name | kind | default | meaning |
//! |---|---|---|---|
//! | `command` | text | (none) | the program: a path (with a `/`; in a suite file, relative to the suite file's folder) or a name looked up on `PATH` |
//! | `args` | text | empty | its arguments, split on whitespace (spaces, tabs); no quoting or escapes, so an argument cannot contain a space |
//! | `timeout_s` | real, 0.01 to 86 400 s | 60 | the trial's time budget: the total time echobench may spend waiting for the program (handshake and every answer); the program is killed when it runs out |
//! | `state_bytes` | integer ≥ 0 | 0 | the program's state memory, as declared by the user (0 = not declared) |
//! | `ops_per_sample` | real ≥ 0 | 0 | its arithmetic per input sample, as declared by the user (0 = not declared) |
//!
//! A typical pair is `command: python3`, `args: detectors/my_detector.py
//! frame_len=256`. A relative `command` path is taken from the suite file's
//! folder (the suite loader joins it, as it does for scenes and recordings);
//! relative paths in `args` are passed as written, so they are taken from
//! echobench's current directory. The
//! program inherits echobench's environment; its stdin, stdout and stderr
//! are pipes to echobench. `command` and `args` are free text; see the note
//! at the end on how the core parameter table declares them.
//!
//! The budget counts only waiting for the program, not the time the harness
//! spends between blocks (synthesis, the trial's other detectors), so a
//! loaded machine does not kill a healthy program; but it includes the
//! start-up (interpreter, imports) up to READY.
//!
//! # Life cycle and start-up cost
//!
//! A state is **one running program**. `plan` starts the program once and
//! sends HELLO, waiting for READY (within the trial's budget): a program that
//! does not start, answers with the wrong magic, speaks another version or
//! exits is a plan error naming `command`, with the end of its stderr. That
//! program is the plan's first state ([`ExternalPlan`]); every further state
//! starts its own. The runner resets a state between trials, and `reset`
//! starts a new program (below), so every trial pays the program's start-up:
//! a few milliseconds for a compiled program, about 0.3 s for Python with
//! numpy (interpreter plus `import numpy`, measured on the development
//! machine; faster machines take 0.1 s), which for a suite of 1 000 trials
//! adds about five minutes of process time per Python detector (divided
//! among the harness's threads). In exchange each trial starts from a fresh
//! process: no state leaks from one trial to the next, and a crash costs one
//! trial. A program that fails to start after the plan's check is a failure
//! of that state's trials, which `process` reports.
//!
//! `reset()` ends the program (as on drop) and starts a new one with a fresh
//! budget: a new process is the only reset that is certain to forget
//! everything, and it keeps the protocol free of a reset message. It also
//! clears an earlier failure when the new program starts cleanly.
//!
//! On drop, the host sends END, closes the program's stdin, gives it 200 ms
//! to exit by itself, then kills it; either way the child is reaped (no
//! zombies). A program that started children of its own must end them
//! itself: only the direct child is killed.
//!
//! # The protocol, version 1
//!
//! Binary, over the program's stdin (host → program) and stdout (program →
//! host). All integers are unsigned little-endian (`u32`); reals are IEEE
//! 754 little-endian (`f32` samples, `f64` times and scores); every message
//! starts with four ASCII bytes. Stderr is free for the program's logs: the
//! host keeps its last 4 KiB and quotes the last lines in failure messages.
//! **Nothing but protocol messages may go to stdout.**
//!
//! **1. HELLO, host → program, 40 bytes, once.**
//!
//! | offset | type | field |
//! |---|---|---|
//! | 0 | 4 bytes | magic `EBXH` |
//! | 4 | u32 | protocol version, 1 |
//! | 8 | f64 | sample rate, Hz |
//! | 16 | f64 | carrier frequency, Hz |
//! | 24 | u32 | channels: 1 = real samples, 2 = I/Q pairs interleaved I, Q |
//! | 28 | u32 | ADC resolution, bits |
//! | 32 | u32 | most values in one BLCK (4096; even) |
//! | 36 | u32 | reserved, 0 |
//!
//! **2. READY, program → host, 12 + n bytes, once, before anything else.**
//! Magic `EBXP`; u32 version (must be 1); u32 n (0 to 256); n bytes of UTF-8,
//! the program's name for messages (may be empty). A program that cannot
//! handle the stream (say, I/Q) writes why on stderr and exits instead.
//!
//! **3. BLCK, host → program.** Tag `BLCK`; u32 k (1 to the HELLO maximum;
//! for I/Q always even, whole pairs); k × f32 samples, volts at the ADC
//! input. The stream is the concatenation of all blocks; how it is cut into
//! blocks depends on the caller, so **a program's scores must not depend on
//! where the cuts fall**. Non-finite samples (NaN, ±∞) are sent as 0.
//!
//! **4. The answer, program → host, to every BLCK:** zero or more SCOR
//! records, then DONE.
//! - SCOR: tag `SCOR`; f64 t_s; f64 value (20 bytes). One per decision frame
//!   that ends within the samples received so far and has not been scored
//!   yet (no lagging: scores for a frame come in the answer to the block
//!   that completes it). t_s = (index one past the frame's last sample) /
//!   sample rate, counting from 0 at the first sample, one index per I/Q
//!   pair. Higher value = more likely motion.
//! - DONE: tag `DONE` (4 bytes), exactly once per BLCK.
//!
//! Records may be written before the whole block has been read. The host
//! checks each answer and fails the detector when a value or a time stamp is
//! not finite, a time stamp is negative, earlier than the one before, later
//! than the end of the samples sent (a wrong sample rate or frame end), or
//! more than 1e-6 samples away from a whole sample instant, or an answer holds
//! more scores than the block has sample instants. The host maps each t_s to
//! its sample instant: the harness counts frame ends in samples, as the
//! built-in detectors report them, and makes them seconds in one place.
//!
//! **5. END, host → program:** tag `END ` (with a space), then the host
//! closes the program's stdin. The program writes nothing more and exits with
//! status 0. (End of input without END means the host is gone: exit too.)
//!
//! A whole exchange, real stream at 2 kHz, frames of 4 samples, hop 4:
//!
//! ```text
//! host → EBXH 01000000 <2000.0 f64> <24.125e9 f64> 01000000 0c000000 00100000 00000000
//! prog → EBXP 01000000 03000000 "abc"
//! host → BLCK 06000000 <6 × f32>      prog → SCOR <0.002 f64> <value f64>  DONE
//! host → BLCK 02000000 <2 × f32>      prog → SCOR <0.004 f64> <value f64>  DONE
//! host → END
//! ```
//!
//! **Why it cannot deadlock.** A pipe deadlock needs each side blocked on a
//! write the other side is not reading (both buffers full), or both blocked
//! on reads. (a) The host never blocks on a write: a dedicated thread writes
//! to stdin, and dedicated threads read stdout and stderr from start to end,
//! so the program's writes always drain, whatever order it reads and writes
//! in (it may stream scores before it has read the block). (b) The host
//! sends a block and then only waits for DONE; the program, once it has the
//! whole block, owes DONE and needs nothing more from the host, so there is
//! no state in which each waits for the other, unless the program breaks the
//! protocol. (c) Every wait of the calling thread is bounded by what is left
//! of the trial's budget, and killing the program ends its pipes, so even a
//! program that breaks the protocol, hangs or ignores its input is killed
//! once it has cost `timeout_s`, and the detector fails with a message;
//! `process` returns. (d) Memory is bounded too: one block in flight (at
//! most two queued), and at most 4096 scores buffered per answer (more is a
//! protocol error). The Python helper strictly alternates (read a whole
//! block, write the whole answer, flush), so it would be deadlock-free even
//! without the host's threads.
//!
//! # Failures
//!
//! Once the program exits early, writes something that is not a message
//! (garbage, a stray `print`, a short record), breaks a rule above, or the
//! budget runs out, the host kills and reaps it and `process` returns a
//! [`DetectorFailure`] with a message, e.g.
//! `external \`crash.sh\`: exited with status 3 after 2 blocks; stderr:
//! calibration file missing`, from then on on every call (the harness reports
//! the trial as failed for this detector; a reset starts a new program). The answer that
//! broke a rule is not pushed at all. Nothing here panics on the program's
//! behaviour.
//!
//! # Cost
//!
//! What a program costs cannot be known from outside, so [`Cost`] is
//! "declared by nobody" unless the suite declares it: `cost()` returns the
//! `state_bytes` and `ops_per_sample` parameters as given, and `None` (not
//! declared) when both are 0, their default. (A port's own figures belong in
//! the suite next to the command, where a reviewer sees them.)
//!
//! # A Python detector
//!
//! With `python/echobench_external.py` importable (same folder as the
//! script, or on `PYTHONPATH`):
//!
//! ```text
//! import numpy as np
//! import echobench_external as ebx
//!
//! def score_frames(frames, stream):
//!     # frames: (k, frame_len) float32 array (complex64 for I/Q), k >= 1
//!     return np.mean(np.abs(frames.astype(np.complex128)) ** 2, axis=1)
//!
//! ebx.run(score_frames, frame_len=256, hop=128, name="mean-power")
//! ```
//!
//! and in the suite: `command: python3`, `args: path/to/that_file.py`. The
//! helper does the handshake, the framing across block boundaries, the time
//! stamps and the answers, and sends Python's `print` to stderr so that it
//! cannot break the protocol. An exception ends the program with its
//! traceback on stderr, which the failure message quotes.
//!
#![deny(missing_docs)]

pub mod protocol;
mod session;

use echobench_core::detector::{
    Cost, Detector, DetectorFailure, DetectorPlan, DetectorPlugin, ParamError, ParamSpec, Params,
    Samples,
};
use echobench_core::param_decl::{IntegerParam, RealParam, TextParam};
use echobench_core::{FrameScore, Score, StreamInfo};
use protocol::{encode_hello, MAX_BLOCK_VALUES, TAG_BLOCK, VERSION};
use session::{FromProgram, Session, Wait};
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::Duration;

/// The plugin's id in suite files.
pub const ID: &str = "external";

/// Longest per-trial time limit accepted: one day.
const MAX_TIMEOUT_S: f64 = 86_400.0;

/// How long an exited program gets to report its status once its output has
/// ended (it normally arrives within microseconds of the pipe closing).
const EXIT_REPORT_WAIT: Duration = Duration::from_secs(1);

/// How far t_s × sample rate may lie from a whole sample instant, in samples:
/// room for a program that computes t_s by a different but exact-enough
/// formula (float sums of hops), far below one sample at any real rate. The
/// host maps each t_s to that instant, the frame end the harness works with.
const INSTANT_TOLERANCE: f64 = 1e-6;

/// `command`: the program to run.
const COMMAND: TextParam = TextParam {
    name: "command",
    about: "program to run: a path, or a name on PATH (needs --allow-exec)",
    default: "",
};

/// `args`: its arguments.
const ARGS: TextParam = TextParam {
    name: "args",
    about: "the program's arguments, split on whitespace (no quoting)",
    default: "",
};

/// `timeout_s`: the trial's time budget.
const TIMEOUT_S: RealParam = RealParam {
    name: "timeout_s",
    unit: "s",
    about: "time the program may make echobench wait per trial, start-up included",
    min: 0.01,
    max: MAX_TIMEOUT_S,
    default: 60.0,
};

/// `state_bytes`: declared state memory.
const STATE_BYTES: IntegerParam = IntegerParam {
    name: "state_bytes",
    unit: "bytes",
    about: "the program's state memory as declared by the user (0 = not declared)",
    min: 0,
    max: 1 << 40,
    default: 0,
};

/// `ops_per_sample`: declared arithmetic.
const OPS_PER_SAMPLE: RealParam = RealParam {
    name: "ops_per_sample",
    unit: "",
    about: "the program's operations per input sample as declared by the user (0 = not declared)",
    min: 0.0,
    max: 1e12,
    default: 0.0,
};

static PARAMS: [ParamSpec; 5] = [
    COMMAND.spec(),
    ARGS.spec(),
    TIMEOUT_S.spec(),
    STATE_BYTES.spec(),
    OPS_PER_SAMPLE.spec(),
];

/// The external-program plugin (id `external`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ExternalPlugin {
    allow_exec: bool,
}

impl ExternalPlugin {
    /// The plugin; `allow_exec` is the user's consent to running programs
    /// (`--allow-exec` on the command line). Without it every configuration
    /// is refused.
    pub const fn new(allow_exec: bool) -> ExternalPlugin {
        ExternalPlugin { allow_exec }
    }

    /// Whether this plugin may start programs.
    pub const fn allows_exec(&self) -> bool {
        self.allow_exec
    }

    /// The program and the declared cost, checked; refuses everything
    /// without consent.
    fn configure(&self, params: &Params) -> Result<(ExternalProgram, Cost), ParamError> {
        let program = ExternalProgram::from_params(params)?;
        if !self.allow_exec {
            return Err(ParamError::new(
                ID,
                "command",
                &program.command,
                "running external programs is turned off: it needs `--allow-exec` on the command \
                 line (a suite file alone must not start programs)",
            ));
        }
        find_program(&program.command)
            .map_err(|message| ParamError::new(ID, "command", &program.command, message))?;
        // Ranges (0 or more, finite) were checked by `Params::resolve` against the declarations.
        let declared_bytes = STATE_BYTES.get(params)?;
        let state_bytes = usize::try_from(declared_bytes).map_err(|_| {
            ParamError::new(
                ID,
                STATE_BYTES.name,
                declared_bytes,
                "does not fit this machine's memory size",
            )
        })?;
        let ops_per_sample = OPS_PER_SAMPLE.get(params)?;
        Ok((
            program,
            Cost {
                state_bytes,
                ops_per_sample,
            },
        ))
    }
}

impl DetectorPlugin for ExternalPlugin {
    fn id(&self) -> &'static str {
        ID
    }

    fn about(&self) -> &'static str {
        "runs a program as the detector, over its stdin/stdout (needs --allow-exec)"
    }

    fn params(&self) -> &'static [ParamSpec] {
        &PARAMS
    }

    /// Starts the program once and does the handshake, so that a program
    /// that is missing, will not start or refuses its settings is refused
    /// here, naming `command`, before any trial; that started program is the
    /// plan's first state ([`ExternalPlan`]).
    fn plan(
        &self,
        params: &Params,
        info: &StreamInfo,
    ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
        let (program, _) = self.configure(params)?;
        let first = ExternalDetector::spawn(program, info)?;
        Ok(Arc::new(ExternalPlan {
            program: first.program.clone(),
            path: first.path.clone(),
            info: *info,
            unused_first: Mutex::new(Some(first)),
        }))
    }

    fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
        check_stream(info)?;
        self.configure(params).map(|_| ())
    }

    fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
        check_stream(info).ok()?;
        // Declared by nobody unless the suite declares it (crate doc, "Cost").
        let declared = self.configure(params).ok()?.1;
        (declared.state_bytes > 0 || declared.ops_per_sample > 0.0).then_some(declared)
    }
}

/// What to run: the program and its time limit.
#[derive(Debug, Clone, PartialEq)]
pub struct ExternalProgram {
    /// A path (containing `/`) or a name looked up on `PATH`.
    pub command: String,
    /// Its arguments.
    pub args: Vec<String>,
    /// The trial's time budget, seconds: the total time the host may wait
    /// for the program (handshake and answers).
    pub timeout_s: f64,
}

impl ExternalProgram {
    /// Reads `command`, `args` (split on whitespace) and `timeout_s`.
    ///
    /// # Errors
    /// An empty `command`, or a time limit outside (0, 86 400] s.
    pub fn from_params(params: &Params) -> Result<ExternalProgram, ParamError> {
        let command = COMMAND.get(params)?.trim().to_string();
        let args = ARGS
            .get(params)?
            .split_whitespace()
            .map(str::to_string)
            .collect();
        let program = ExternalProgram {
            command,
            args,
            timeout_s: TIMEOUT_S.get(params)?,
        };
        program.check()?;
        Ok(program)
    }

    fn check(&self) -> Result<(), ParamError> {
        if self.command.is_empty() {
            return Err(ParamError::new(
                ID,
                "command",
                "\"\"",
                "no program given: set `command` to the program's path or its name on PATH",
            ));
        }
        if !(self.timeout_s.is_finite() && self.timeout_s > 0.0 && self.timeout_s <= MAX_TIMEOUT_S)
        {
            return Err(ParamError::new(
                ID,
                "timeout_s",
                self.timeout_s,
                format!("expected a time limit in (0, {MAX_TIMEOUT_S}] s"),
            ));
        }
        Ok(())
    }

    /// The command line shortened for messages: file names, not full paths.
    fn label(&self) -> String {
        let short = |word: &str| -> String {
            Path::new(word)
                .file_name()
                .filter(|_| word.contains('/'))
                .map_or_else(|| word.to_string(), |n| n.to_string_lossy().into_owned())
        };
        std::iter::once(&self.command)
            .chain(&self.args)
            .map(|w| short(w))
            .collect::<Vec<_>>()
            .join(" ")
    }
}

/// The plan of an external detector: the program, found and checked once.
///
/// A state is a running program; there is nothing to share between two
/// (each has its own process), so `start` starts another program, except
/// the first time: the plan keeps the program it started to check the
/// handshake and hands that one out first, so planning costs no extra start.
/// A program that fails to start later is a failure of the trials that
/// state runs (`process` returns it), not a panic.
pub struct ExternalPlan {
    /// The program started by [`DetectorPlugin::plan`], until a state takes it.
    unused_first: Mutex<Option<ExternalDetector>>,
    /// What every other state starts: a copy of the first before it ran.
    program: ExternalProgram,
    path: PathBuf,
    info: StreamInfo,
}

impl DetectorPlan for ExternalPlan {
    fn start(&self) -> Box<dyn Detector> {
        let first = self
            .unused_first
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .take();
        Box::new(first.unwrap_or_else(|| {
            let mut detector =
                ExternalDetector::unstarted(self.program.clone(), self.path.clone(), &self.info);
            if let Err(message) = detector.start() {
                detector.failure = Some(message);
            }
            detector
        }))
    }
}

/// A running external detector: one program speaking the protocol.
pub struct ExternalDetector {
    program: ExternalProgram,
    path: PathBuf,
    info: StreamInfo,
    label: String,
    name: String,
    session: Option<Session>,
    failure: Option<String>,
    /// Sample instants sent so far (pairs, for I/Q).
    sent_instants: u64,
    answered_blocks: u64,
    last_t_s: f64,
}

impl std::fmt::Debug for ExternalDetector {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("ExternalDetector")
            .field("program", &self.program)
            .field("name", &self.name)
            .field("child_id", &self.child_id())
            .field("failure", &self.failure)
            .finish_non_exhaustive()
    }
}

impl ExternalDetector {
    /// Starts `program` for a stream and does the handshake.
    ///
    /// This does not ask for consent: calling it is the consent (the plugin
    /// asks on the user's behalf).
    ///
    /// # Errors
    /// A [`ParamError`] naming `command` when the program is not found, does
    /// not start, or does not answer HELLO with a valid READY of version 1
    /// within the time budget (with the end of its stderr); `timeout_s` or
    /// `sample_rate_hz` when those are not usable.
    pub fn spawn(
        program: ExternalProgram,
        info: &StreamInfo,
    ) -> Result<ExternalDetector, ParamError> {
        program.check()?;
        check_stream(info)?;
        let path = find_program(&program.command)
            .map_err(|message| ParamError::new(ID, "command", &program.command, message))?;
        let mut detector = ExternalDetector::unstarted(program, path, info);
        detector.start().map_err(|message| {
            ParamError::new(ID, "command", &detector.program.command, message)
        })?;
        Ok(detector)
    }

    /// A detector for `program` (found at `path`) that has not started it yet.
    fn unstarted(program: ExternalProgram, path: PathBuf, info: &StreamInfo) -> ExternalDetector {
        let label = program.label();
        ExternalDetector {
            program,
            path,
            info: *info,
            label,
            name: String::new(),
            session: None,
            failure: None,
            sent_instants: 0,
            answered_blocks: 0,
            last_t_s: 0.0,
        }
    }

    /// The name the program gave in READY (empty when it gave none).
    pub fn program_name(&self) -> &str {
        &self.name
    }

    /// The running child's process id, while it runs.
    pub fn child_id(&self) -> Option<u32> {
        self.session.as_ref().map(Session::id)
    }

    /// Starts a program and does the handshake; on error the message says
    /// what happened (the program is already killed and reaped).
    fn start(&mut self) -> Result<(), String> {
        let budget = Duration::try_from_secs_f64(self.program.timeout_s)
            .map_err(|e| format!("time limit {} s: {e}", self.program.timeout_s))?;
        let mut session = Session::start(&self.path, &self.program.args, budget)
            .map_err(|e| format!("could not start `{}`: {e}", self.path.display()))?;
        let mut hello = session.message_buffer();
        encode_hello(&self.info, &mut hello);
        let outcome = match session.send(hello) {
            Err(why) => Err(why.to_string()),
            Ok(()) => match session.receive() {
                Wait::Got(FromProgram::Ready { version, name }) if version == VERSION => Ok(name),
                Wait::Got(FromProgram::Ready { version, .. }) => Err(format!(
                    "speaks protocol version {version}; echobench speaks version {VERSION}"
                )),
                Wait::Got(FromProgram::Broken(why)) => Err(why),
                Wait::Got(FromProgram::Answer(_)) => {
                    Err("answered before its handshake reply".to_string())
                }
                Wait::Got(FromProgram::Closed) => {
                    Err(exit_story(&mut session, "before its handshake reply"))
                }
                Wait::TimedOut => Err(format!(
                    "gave no handshake reply within timeout_s = {} s; killed",
                    self.program.timeout_s
                )),
            },
        };
        match outcome {
            Ok(name) => {
                self.name = name;
                self.session = Some(session);
                self.sent_instants = 0;
                self.answered_blocks = 0;
                self.last_t_s = 0.0;
                self.failure = None;
                Ok(())
            }
            Err(what) => {
                session.kill();
                Err(format!(
                    "external `{}`: {what}; {}",
                    self.label,
                    session.stderr_summary()
                ))
            }
        }
    }

    /// Kills the program and records why; nothing more is pushed afterwards.
    fn fail(&mut self, what: String) {
        let stderr = match self.session.take() {
            Some(mut session) => {
                session.kill();
                session.stderr_summary()
            }
            None => "nothing on stderr".to_string(),
        };
        self.failure = Some(format!("external `{}`: {what}; {stderr}", self.label));
    }

    /// "after 3 blocks", for messages.
    fn progress(&self) -> String {
        progress(self.answered_blocks)
    }

    /// Sends one BLCK holding `values` (already clean) and pushes its answer.
    fn exchange(&mut self, message: Vec<u8>, instants: u64, out: &mut Vec<FrameScore>) {
        let Some(session) = &mut self.session else {
            return;
        };
        // Anything already waiting was not asked for: an extra DONE, or an
        // exit or protocol break since the last answer.
        if let Some(early) = session.unsolicited() {
            let what = match early {
                FromProgram::Answer(_) => {
                    format!(
                        "sent an answer it was not asked for (two DONE for one BLCK?) {}",
                        self.progress()
                    )
                }
                FromProgram::Broken(why) => format!("{why} ({})", self.progress()),
                FromProgram::Closed => exit_story(session, &progress(self.answered_blocks)),
                FromProgram::Ready { .. } => "sent a second handshake reply".to_string(),
            };
            return self.fail(what);
        }
        if let Err(why) = session.send(message) {
            let what = format!("{why} ({})", self.progress());
            return self.fail(what);
        }
        self.sent_instants += instants;
        match session.receive() {
            Wait::Got(FromProgram::Answer(answer)) => match self.check_answer(&answer, instants) {
                Ok(()) => {
                    let fs = self.info.sample_rate_hz;
                    out.extend(answer.iter().map(|s| FrameScore {
                        // check_answer made sure this is within 1e-6 of a whole instant.
                        end_sample: (s.t_s * fs).round() as u64,
                        value: s.value,
                    }));
                    if let Some(last) = answer.last() {
                        self.last_t_s = last.t_s;
                    }
                    self.answered_blocks += 1;
                    if let Some(session) = &self.session {
                        session.recycle(answer);
                    }
                }
                Err(why) => {
                    let what = format!(
                        "{why} (in its answer to block {})",
                        self.answered_blocks + 1
                    );
                    self.fail(what);
                }
            },
            Wait::Got(FromProgram::Broken(why)) => {
                let what = format!("{why} ({})", self.progress());
                self.fail(what);
            }
            Wait::Got(FromProgram::Closed) => {
                let what = exit_story(session, &progress(self.answered_blocks));
                self.fail(what);
            }
            Wait::Got(FromProgram::Ready { .. }) => {
                self.fail("sent a second handshake reply".to_string());
            }
            Wait::TimedOut => {
                let what = format!(
                    "no answer within the trial's time budget timeout_s = {} s ({}); killed",
                    self.program.timeout_s,
                    self.progress()
                );
                self.fail(what);
            }
        }
    }

    /// The rules of an answer (crate doc, protocol step 4).
    fn check_answer(&self, answer: &[Score], instants: u64) -> Result<(), String> {
        if answer.len() as u64 > instants {
            return Err(format!(
                "sent {} scores for a block of {instants} sample instants (at most one per instant)",
                answer.len()
            ));
        }
        let end_s = self.sent_instants as f64 / self.info.sample_rate_hz;
        let mut previous = self.last_t_s;
        for score in answer {
            if !score.value.is_finite() {
                return Err(format!(
                    "sent a score of {} at t = {} s (scores must be finite)",
                    score.value, score.t_s
                ));
            }
            if !score.t_s.is_finite() || score.t_s < 0.0 {
                return Err(format!(
                    "sent a time stamp of {} s (time stamps must be finite and not negative)",
                    score.t_s
                ));
            }
            if score.t_s < previous {
                return Err(format!(
                    "sent scores out of order: t = {} s after t = {previous} s",
                    score.t_s
                ));
            }
            let instant = score.t_s * self.info.sample_rate_hz;
            if instant.round() > self.sent_instants as f64 {
                return Err(format!(
                    "sent a score for t = {} s, after the end of the samples sent so far ({end_s} s): \
                     a wrong sample rate or frame end?",
                    score.t_s
                ));
            }
            if (instant - instant.round()).abs() > INSTANT_TOLERANCE {
                return Err(format!(
                    "sent a score for t = {} s, which is not the end of a sample instant \
                     (t_s × sample rate = {instant}): t_s must be (index one past the frame's \
                     last sample) / sample rate",
                    score.t_s
                ));
            }
            previous = score.t_s;
        }
        Ok(())
    }
}

impl ExternalDetector {
    /// Sends `values` (whole sample instants: a typed block never splits an
    /// I/Q pair) in BLCK messages of at most 4096 values, which is even, so
    /// every message holds whole pairs too, and pushes every answer, until
    /// the program fails (then `self.failure` says why).
    fn feed(&mut self, values: &[f32], out: &mut Vec<FrameScore>) {
        for chunk in values.chunks(MAX_BLOCK_VALUES) {
            if self.failure.is_some() {
                return;
            }
            let Some(session) = &mut self.session else {
                return;
            };
            let mut message = session.message_buffer();
            message.extend_from_slice(&TAG_BLOCK);
            // chunk.len() ≤ MAX_BLOCK_VALUES = 4096, so the cast cannot truncate.
            message.extend_from_slice(&(chunk.len() as u32).to_le_bytes());
            for &x in chunk {
                // The protocol sends non-finite samples as 0.
                let value = if x.is_finite() { x } else { 0.0 };
                message.extend_from_slice(&value.to_le_bytes());
            }
            let instants = (chunk.len() / self.info.channels.count()) as u64;
            self.exchange(message, instants, out);
        }
    }
}

impl Detector for ExternalDetector {
    /// Feeds `block` to the program; once it has failed, every call returns
    /// the same failure (the program is gone).
    fn process(
        &mut self,
        block: Samples<'_>,
        out: &mut Vec<FrameScore>,
    ) -> Result<(), DetectorFailure> {
        if self.failure.is_none() {
            self.feed(block.values(), out);
        }
        match &self.failure {
            Some(message) => Err(DetectorFailure::new(message.clone())),
            None => Ok(()),
        }
    }

    fn reset(&mut self) {
        if let Some(mut session) = self.session.take() {
            session.close();
        }
        if let Err(message) = self.start() {
            self.failure = Some(message);
        }
    }
}

/// "after 3 blocks", for messages.
fn progress(answered_blocks: u64) -> String {
    match answered_blocks {
        1 => "after 1 block".to_string(),
        n => format!("after {n} blocks"),
    }
}

/// Why the program's output ended, once it has: its exit status (or that it
/// kept running and was killed). `when` says at what point, e.g. "after 3 blocks".
fn exit_story(session: &mut Session, when: &str) -> String {
    match session.wait_exit(EXIT_REPORT_WAIT) {
        Some(status) => describe_exit(status, when),
        None => {
            session.kill();
            format!("closed its output {when} but kept running; killed")
        }
    }
}

fn describe_exit(status: std::process::ExitStatus, when: &str) -> String {
    if let Some(code) = status.code() {
        return format!("exited with status {code} {when}");
    }
    #[cfg(unix)]
    {
        use std::os::unix::process::ExitStatusExt;
        if let Some(signal) = status.signal() {
            return format!("was killed by signal {signal} {when}");
        }
    }
    format!("ended ({status}) {when}")
}

/// The stream facts the protocol needs.
fn check_stream(info: &StreamInfo) -> Result<(), ParamError> {
    echobench_core::detector::check_sample_rate(ID, info).map(|_| ())
}

/// Resolves `command` as the shell would: a path when it holds a `/`, else
/// the first executable file of that name on `PATH`.
fn find_program(command: &str) -> Result<PathBuf, String> {
    if command.is_empty() {
        return Err(
            "no program given: set `command` to the program's path or its name on PATH".to_string(),
        );
    }
    if command.contains('/') {
        let path = PathBuf::from(command);
        return match runnable(&path) {
            Ok(()) => Ok(path),
            Err(why) => Err(format!("program `{command}` {why}")),
        };
    }
    let search = std::env::var_os("PATH").unwrap_or_default();
    std::env::split_paths(&search)
        .map(|folder| folder.join(command))
        .find(|candidate| runnable(candidate).is_ok())
        .ok_or_else(|| {
            format!("no program `{command}` found on PATH (give a path with a `/` for a file elsewhere)")
        })
}

/// Whether `path` is a file we may execute; if not, why, for a message.
fn runnable(path: &Path) -> Result<(), String> {
    let metadata = match std::fs::metadata(path) {
        Ok(m) => m,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            return Err("does not exist".to_string())
        }
        Err(e) => return Err(format!("cannot be read: {e}")),
    };
    if !metadata.is_file() {
        return Err("is not a file".to_string());
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        if metadata.permissions().mode() & 0o111 == 0 {
            return Err(
                "is not executable (chmod +x it, or run it through its interpreter: \
                 command: python3, args: <the script>)"
                    .to_string(),
            );
        }
    }
    Ok(())
}
