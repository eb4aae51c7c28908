//! The server's stdio transport: frames (`Content-Length` header, JSON body) in and
//! out, as `lsp-server`'s own stdio transport reads them, but a body that is not a
//! JSON-RPC message does not end the session. JSON-RPC 2.0 (section 5.1) answers a
//! body that is not JSON with error -32700 "Parse error" and one that is JSON but no
//! request, notification or response with -32600 "Invalid Request", `id` null unless
//! the message carried one; the next frame is then read as usual (its length is known
//! from the header). Only a header that cannot be read (no way to find the next frame)
//! or the end of the input ends the session.

use lsp_server::{Connection, Message};
use serde_json::{Value, json};
use std::io::{self, BufRead, Write};
use std::thread::JoinHandle;

/// The threads reading stdin and writing stdout; join them after the server is done.
pub struct IoThreads {
    reader: JoinHandle<io::Result<()>>,
    writer: JoinHandle<io::Result<()>>,
}

impl IoThreads {
    /// Wait for both threads; the first I/O error, if any.
    pub fn join(self) -> io::Result<()> {
        let r = self
            .reader
            .join()
            .map_err(|_| io::Error::other("the reader panicked"))?;
        let w = self
            .writer
            .join()
            .map_err(|_| io::Error::other("the writer panicked"))?;
        r.and(w)
    }
}

/// A connection over stdin and stdout.
pub fn stdio() -> (Connection, IoThreads) {
    let (server, io) = Connection::memory();
    let Connection { sender, receiver } = io;
    let writer = std::thread::Builder::new()
        .name("foldcheck-lsp-writer".to_string())
        .spawn(move || {
            for msg in receiver {
                let mut out = io::stdout().lock();
                msg.write(&mut out)?;
            }
            Ok(())
        })
        .expect("a thread starts");
    let reader = std::thread::Builder::new()
        .name("foldcheck-lsp-reader".to_string())
        .spawn(move || {
            let stdin = io::stdin();
            let mut input = stdin.lock();
            while let Some(body) = read_frame(&mut input)? {
                match parse(&body) {
                    Ok(msg) => {
                        let exit = matches!(&msg, Message::Notification(n) if n.method == "exit");
                        if sender.send(msg).is_err() || exit {
                            break;
                        }
                    }
                    Err(reply) => write_frame(&mut io::stdout().lock(), &reply.to_string())?,
                }
            }
            Ok(())
        })
        .expect("a thread starts");
    (server, IoThreads { reader, writer })
}

/// One frame's body; `None` at the end of the input.
pub fn read_frame(input: &mut impl BufRead) -> io::Result<Option<Vec<u8>>> {
    let mut size = None;
    let mut line = String::new();
    loop {
        line.clear();
        if input.read_line(&mut line)? == 0 {
            return Ok(None);
        }
        let header = line.trim_end_matches(['\r', '\n']);
        if header.is_empty() {
            if size.is_none() && line == "\r\n" {
                // A blank line where headers should be: skip it.
                continue;
            }
            break;
        }
        let Some((name, value)) = header.split_once(':') else {
            return Err(io::Error::new(
                io::ErrorKind::InvalidData,
                format!("malformed header: {header:?}"),
            ));
        };
        if name.trim().eq_ignore_ascii_case("Content-Length") {
            size = Some(value.trim().parse::<usize>().map_err(|e| {
                io::Error::new(io::ErrorKind::InvalidData, format!("Content-Length: {e}"))
            })?);
        }
    }
    let size =
        size.ok_or_else(|| io::Error::new(io::ErrorKind::InvalidData, "no Content-Length"))?;
    let mut body = vec![0; size];
    input.read_exact(&mut body)?;
    Ok(Some(body))
}

/// A frame's body as a message, or the error response to send back.
pub fn parse(body: &[u8]) -> Result<Message, Value> {
    let error = |id: Value, code: i32, message: &str| json!({ "jsonrpc": "2.0", "id": id, "error": { "code": code, "message": message } });
    let value: Value = match serde_json::from_slice(body) {
        Ok(v) => v,
        Err(e) => return Err(error(Value::Null, -32700, &format!("Parse error: {e}"))),
    };
    let id = value
        .get("id")
        .filter(|id| id.is_number() || id.is_string())
        .cloned()
        .unwrap_or(Value::Null);
    serde_json::from_value(value).map_err(|e| error(id, -32600, &format!("Invalid Request: {e}")))
}

fn write_frame(out: &mut impl Write, body: &str) -> io::Result<()> {
    write!(out, "Content-Length: {}\r\n\r\n{body}", body.len())?;
    out.flush()
}
