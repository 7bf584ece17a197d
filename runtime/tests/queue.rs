//! EventQueue under a real producer thread and consumer thread (std in tests only).

use detent::EventQueue;
use std::time::{Duration, Instant};

const EVENTS: u32 = 100_000;

/// A producer thread posts 100,000 numbered events through the sender while the
/// consumer thread drains: every event arrives exactly once, in order. A small queue
/// (15 slots) makes the producer hit "full" many times, which it must see as `Err`
/// carrying the same event back (retried, not lost).
#[test]
fn producer_and_consumer_threads_lose_nothing_and_keep_order() {
    let mut queue: EventQueue<u32, 16> = EventQueue::new();
    let (mut sender, mut receiver) = queue.split();
    let (full_count, received) = std::thread::scope(|s| {
        let producer = s.spawn(move || {
            let mut full_count = 0u64;
            for n in 0..EVENTS {
                let mut pending = n;
                while let Err(back) = sender.post(pending) {
                    assert_eq!(back, pending, "a refused post hands back its own event");
                    full_count += 1;
                    pending = back;
                    std::thread::yield_now();
                }
            }
            full_count
        });
        let consumer = s.spawn(move || {
            let mut received = Vec::with_capacity(EVENTS as usize);
            let deadline = Instant::now() + Duration::from_secs(60);
            while received.len() < EVENTS as usize {
                let before = received.len();
                // Alternate the two ways of taking events.
                if before % 2 == 0 {
                    received.extend(receiver.drain());
                } else if let Some(event) = receiver.next() {
                    received.push(event);
                }
                if received.len() == before {
                    assert!(Instant::now() < deadline, "consumer starved");
                    std::thread::yield_now();
                }
            }
            assert!(
                receiver.next().is_none(),
                "nothing beyond the posted events"
            );
            received
        });
        (producer.join().unwrap(), consumer.join().unwrap())
    });
    assert_eq!(received.len(), EVENTS as usize);
    for (index, event) in received.iter().enumerate() {
        assert_eq!(*event, index as u32, "event {index} out of order");
    }
    eprintln!("queue full {full_count} times during {EVENTS} posts");
}

/// heapless's ring keeps one slot free: `EventQueue<_, N>` holds `N - 1` events, and
/// the `N`th post is refused at once (no blocking, no overwrite of older events).
#[test]
fn full_queue_refuses_without_blocking() {
    let mut queue: EventQueue<u8, 8> = EventQueue::new();
    assert_eq!(EventQueue::<u8, 8>::CAPACITY, 7);
    assert_eq!(queue.capacity(), 7);
    assert!(queue.is_empty());
    for n in 0..7 {
        assert_eq!(queue.post(n), Ok(()));
    }
    assert!(queue.is_full());
    assert_eq!(queue.len(), 7);
    // Would hang the test if post blocked; it must hand the event back instead.
    assert_eq!(queue.post(200), Err(200));
    assert_eq!(queue.post(201), Err(201));
    assert_eq!(queue.pop(), Some(0), "the oldest event was kept");
    assert_eq!(queue.post(7), Ok(()));
    let rest: Vec<u8> = std::iter::from_fn(|| queue.pop()).collect();
    assert_eq!(rest, [1, 2, 3, 4, 5, 6, 7]);
    assert_eq!(queue.pop(), None);
}

/// The same through the split halves, including the halves' views of the length.
#[test]
fn split_halves_report_full_and_empty() {
    let mut queue: EventQueue<u16, 4> = EventQueue::new();
    let (mut sender, mut receiver) = queue.split();
    assert_eq!(sender.capacity(), 3);
    assert_eq!(receiver.capacity(), 3);
    assert!(receiver.is_empty() && sender.is_empty());
    for n in 10..13 {
        sender.post(n).unwrap();
    }
    assert!(sender.is_full());
    assert_eq!(sender.post(99), Err(99));
    assert_eq!(receiver.len(), 3);
    assert_eq!(receiver.next(), Some(10));
    assert_eq!(sender.len(), 2);
    sender.post(13).unwrap();
    assert_eq!(receiver.drain().collect::<Vec<_>>(), [11, 12, 13]);
    assert!(receiver.is_empty());
    assert_eq!(receiver.next(), None);
}

/// `drain` yields only what was waiting when it was called, even while more arrives:
/// bounded work per main-loop pass.
#[test]
fn drain_is_bounded_by_the_events_waiting_at_the_call() {
    let mut queue: EventQueue<u32, 8> = EventQueue::new();
    let (mut sender, mut receiver) = queue.split();
    sender.post(1).unwrap();
    sender.post(2).unwrap();
    let mut drain = receiver.drain();
    assert_eq!(drain.len(), 2);
    assert_eq!(drain.next(), Some(1));
    sender.post(3).unwrap(); // posted mid-drain: left for the next pass
    assert_eq!(drain.next(), Some(2));
    assert_eq!(drain.next(), None);
    assert_eq!(drain.next(), None);
    assert_eq!(receiver.next(), Some(3));
}

/// `new` is `const`: a queue can initialise a `static` (behind a critical section).
#[test]
fn queue_in_a_static_behind_a_critical_section() {
    use core::cell::RefCell;
    use critical_section::Mutex;
    static QUEUE: Mutex<RefCell<EventQueue<u8, 4>>> = Mutex::new(RefCell::new(EventQueue::new()));
    let posted: Vec<bool> = (0..5)
        .map(|n| critical_section::with(|cs| QUEUE.borrow_ref_mut(cs).post(n).is_ok()))
        .collect();
    assert_eq!(posted, [true, true, true, false, false]);
    let taken: Vec<u8> =
        std::iter::from_fn(|| critical_section::with(|cs| QUEUE.borrow_ref_mut(cs).pop()))
            .collect();
    assert_eq!(taken, [0, 1, 2]);
}
