//! Decoding on one thread and the sink on another: an importer that decodes
//! sequentially (COMTRADE) streams into a forwarding sink on a worker
//! thread, while the calling thread hands the blocks to the real sink (the
//! analysis). A block given away whole ([`FrameSink::block_owned`]) travels
//! as it is; any other is copied once (a few hundred kilobytes). Buffers
//! come back for reuse.

use crate::model::{Block, FrameSink, OwnedBlock};
use std::sync::mpsc::{channel, sync_channel, Receiver, Sender, SyncSender};

enum Message {
    Block(OwnedBlock),
    Gap,
}

/// The worker's sink: sends each block, copied into a recycled buffer when
/// it is only lent.
struct Forward {
    tx: SyncSender<Message>,
    recycled: Receiver<OwnedBlock>,
    /// The consumer has gone: further blocks are dropped.
    closed: bool,
}

impl Forward {
    fn buffers(&self) -> OwnedBlock {
        self.recycled.try_recv().unwrap_or_default()
    }
}

impl FrameSink for Forward {
    fn block(&mut self, block: &Block<'_>) {
        if self.closed {
            return;
        }
        let mut o = self.buffers();
        o.time.clear();
        o.time.extend_from_slice(block.time);
        o.keys.clear();
        let mut used = 0;
        for (key, values) in block.channels.iter().enumerate() {
            let Some(values) = values else { continue };
            if used == o.cols.len() {
                o.cols.push(Vec::new());
            }
            o.keys.push(key);
            o.cols[used].clear();
            o.cols[used].extend_from_slice(values);
            used += 1;
        }
        o.cols.truncate(used);
        self.closed = self.tx.send(Message::Block(o)).is_err();
    }

    fn block_owned(&mut self, block: OwnedBlock) -> OwnedBlock {
        if self.closed {
            return block;
        }
        match self.tx.send(Message::Block(block)) {
            Ok(()) => self.buffers(),
            Err(back) => {
                self.closed = true;
                match back.0 {
                    Message::Block(b) => b,
                    Message::Gap => OwnedBlock::default(),
                }
            }
        }
    }

    fn gap(&mut self) {
        if !self.closed {
            self.closed = self.tx.send(Message::Gap).is_err();
        }
    }
}

/// Runs `produce` on a worker thread with a sink that forwards to `sink`
/// on this thread, and returns what `produce` returned. The blocks reach
/// `sink` in the order they were produced, gaps included.
pub fn ahead<T: Send>(
    sink: &mut dyn FrameSink,
    produce: impl FnOnce(&mut dyn FrameSink) -> T + Send,
) -> T {
    // Two blocks in flight keep both threads busy.
    let (tx, rx) = sync_channel::<Message>(2);
    let (back, recycled) = channel::<OwnedBlock>();
    std::thread::scope(|scope| {
        let worker = scope.spawn(move || {
            let mut forward = Forward {
                tx,
                recycled,
                closed: false,
            };
            produce(&mut forward)
        });
        consume(&rx, &back, sink);
        match worker.join() {
            Ok(t) => t,
            Err(panic) => std::panic::resume_unwind(panic),
        }
    })
}

fn consume(rx: &Receiver<Message>, back: &Sender<OwnedBlock>, sink: &mut dyn FrameSink) {
    for m in rx {
        match m {
            Message::Gap => sink.gap(),
            Message::Block(o) => {
                sink.block(&o.view());
                let _ = back.send(o);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{ChannelKey, N_KEYS};

    /// Records what reaches it: block lengths, first values and gaps.
    #[derive(Default)]
    struct Log(Vec<String>);

    impl FrameSink for Log {
        fn block(&mut self, b: &Block<'_>) {
            let va = b.channels[ChannelKey::Va.index()].map(|v| v.to_vec());
            let st = b.channels[ChannelKey::Status.index()].map(|v| v.to_vec());
            self.0.push(format!("{:?} {va:?} {st:?}", b.time));
        }
        fn gap(&mut self) {
            self.0.push("gap".into());
        }
    }

    fn produce(sink: &mut dyn FrameSink) -> usize {
        let mut sent = 0;
        let mut spare = OwnedBlock::default();
        for k in 0..50 {
            let t: Vec<f64> = (0..k % 7 + 1).map(|i| (k * 10 + i) as f64).collect();
            let v: Vec<f64> = t.iter().map(|x| x * 2.0).collect();
            let mut channels: [Option<&[f64]>; N_KEYS] = [None; N_KEYS];
            channels[ChannelKey::Va.index()] = Some(&v);
            if k % 3 == 0 {
                channels[ChannelKey::Status.index()] = Some(&t);
            }
            if k % 2 == 0 {
                sink.block(&Block { time: &t, channels });
            } else {
                // Given away whole, into whatever buffers came back.
                let mut o = std::mem::take(&mut spare);
                o.time.clear();
                o.time.extend_from_slice(&t);
                o.keys.clear();
                o.cols.resize_with(2, Vec::new);
                o.keys.push(ChannelKey::Va.index());
                o.cols[0].clear();
                o.cols[0].extend_from_slice(&v);
                if k % 3 == 0 {
                    o.keys.push(ChannelKey::Status.index());
                    o.cols[1].clear();
                    o.cols[1].extend_from_slice(&t);
                } else {
                    o.cols.truncate(1);
                }
                spare = sink.block_owned(o);
            }
            if k % 11 == 5 {
                sink.gap();
            }
            sent += 1;
        }
        sent
    }

    #[test]
    fn blocks_and_gaps_arrive_in_order_and_whole() {
        let mut direct = Log::default();
        produce(&mut direct);
        let mut through = Log::default();
        let sent = ahead(&mut through, produce);
        assert_eq!(sent, 50);
        assert_eq!(through.0, direct.0);
    }
}
