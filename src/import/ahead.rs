//! Decoding on one thread and the sink on another: an importer that decodes
//! sequentially (COMTRADE) streams into a forwarding sink on a worker
//! thread, while the calling thread hands the blocks to the real sink (the
//! analysis). Blocks are copied once (a few hundred kilobytes each) and
//! their buffers come back for reuse.

use crate::model::{Block, FrameSink, N_KEYS};
use std::sync::mpsc::{channel, sync_channel, Receiver, Sender, SyncSender};

/// A block owned by the channel between the threads.
#[derive(Default)]
struct Owned {
    time: Vec<f64>,
    /// Channel key index and values, in the block's order.
    channels: Vec<(usize, Vec<f64>)>,
}

enum Message {
    Block(Owned),
    Gap,
}

/// The worker's sink: copies each block into a recycled buffer and sends it.
struct Forward {
    tx: SyncSender<Message>,
    recycled: Receiver<Owned>,
    /// The consumer has gone: further blocks are dropped.
    closed: bool,
}

impl FrameSink for Forward {
    fn block(&mut self, block: &Block<'_>) {
        if self.closed {
            return;
        }
        let mut o = self.recycled.try_recv().unwrap_or_default();
        o.time.clear();
        o.time.extend_from_slice(block.time);
        let mut used = 0;
        for (key, values) in block.channels.iter().enumerate() {
            let Some(values) = values else { continue };
            if used == o.channels.len() {
                o.channels.push((key, Vec::new()));
            }
            let slot = &mut o.channels[used];
            slot.0 = key;
            slot.1.clear();
            slot.1.extend_from_slice(values);
            used += 1;
        }
        o.channels.truncate(used);
        self.closed = self.tx.send(Message::Block(o)).is_err();
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
    let (back, recycled) = channel::<Owned>();
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

fn consume(rx: &Receiver<Message>, back: &Sender<Owned>, sink: &mut dyn FrameSink) {
    for m in rx {
        match m {
            Message::Gap => sink.gap(),
            Message::Block(o) => {
                let mut channels: [Option<&[f64]>; N_KEYS] = [None; N_KEYS];
                for (key, values) in &o.channels {
                    channels[*key] = Some(values);
                }
                sink.block(&Block {
                    time: &o.time,
                    channels,
                });
                let _ = back.send(o);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::ChannelKey;

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
        for k in 0..50 {
            let t: Vec<f64> = (0..k % 7 + 1).map(|i| (k * 10 + i) as f64).collect();
            let v: Vec<f64> = t.iter().map(|x| x * 2.0).collect();
            let mut channels: [Option<&[f64]>; N_KEYS] = [None; N_KEYS];
            channels[ChannelKey::Va.index()] = Some(&v);
            if k % 3 == 0 {
                channels[ChannelKey::Status.index()] = Some(&t);
            }
            sink.block(&Block { time: &t, channels });
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
