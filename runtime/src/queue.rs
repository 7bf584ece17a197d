//! [`EventQueue`]: a fixed-capacity single-producer single-consumer event queue for
//! events posted from an interrupt handler and drained by the main loop.

use heapless::spsc::{Consumer, Producer, Queue};

/// A fixed-capacity FIFO of events for an interrupt handler (producer) and the
/// main loop (consumer).
///
/// Built on `heapless::spsc::Queue`: a ring buffer whose head and tail indices are
/// atomics, one written by each side (the classic wait-free single-producer
/// single-consumer ring, common practice). Every operation is O(1), allocates nothing,
/// never blocks and never panics: posting to a full queue hands the event back as
/// `Err(event)`.
///
/// # Capacity
///
/// The ring keeps one slot empty to tell "full" from "empty", so an
/// `EventQueue<E, N>` holds at most **`N - 1`** events ([`EventQueue::CAPACITY`]).
/// `N` must be at least 2 (checked at compile time); a power of two makes the index
/// arithmetic a mask instead of a division.
///
/// # Two ways to share it
///
/// **Behind a critical section** (simplest; works with any `critical-section`
/// implementation, e.g. the one `cortex-m` provides). The interrupt handler and the
/// main loop each take a short critical section to post or take one event:
///
/// ```
/// use core::cell::RefCell;
/// use critical_section::Mutex;
/// use detent::EventQueue;
///
/// #[derive(Clone, Copy, Debug, PartialEq, Eq)]
/// enum Event { FloatUp, FloatDown }
///
/// // 8 slots: holds up to 7 pending events.
/// static EVENTS: Mutex<RefCell<EventQueue<Event, 8>>> =
///     Mutex::new(RefCell::new(EventQueue::new()));
///
/// /// The float switch's edge interrupt (registered with the interrupt controller).
/// fn float_switch_irq(level_high: bool) {
///     let event = if level_high { Event::FloatUp } else { Event::FloatDown };
///     critical_section::with(|cs| {
///         // A full queue drops the event; count it if losing one matters.
///         let _dropped = EVENTS.borrow_ref_mut(cs).post(event).is_err();
///     });
/// }
///
/// fn main_loop_iteration(handled: &mut Vec<Event>) {
///     // Take one event per critical section, then step the machine outside it.
///     while let Some(event) = critical_section::with(|cs| EVENTS.borrow_ref_mut(cs).pop()) {
///         handled.push(event); // machine.step(event, &mut hooks) in firmware
///     }
/// }
///
/// float_switch_irq(true);
/// float_switch_irq(false);
/// let mut handled = Vec::new();
/// main_loop_iteration(&mut handled);
/// assert_eq!(handled, [Event::FloatUp, Event::FloatDown]);
/// ```
///
/// **Split, lock-free**: [`EventQueue::split`] gives an [`EventSender`] to move into
/// the interrupt handler's context and an [`EventReceiver`] for the main loop; neither
/// side ever disables interrupts. Both borrow the queue, so in firmware the queue is a
/// `&'static mut` obtained once at start-up (from a framework's task resources or a
/// static-cell crate). The halves are `Send` when `E` is, as threads show here:
///
/// ```
/// use detent::EventQueue;
///
/// let mut queue: EventQueue<u32, 4> = EventQueue::new();
/// let (mut sender, mut receiver) = queue.split();
/// std::thread::scope(|s| {
///     s.spawn(move || {
///         for n in 0..10 {
///             // Never blocks: a full queue gives the event back; retry later.
///             let mut pending = n;
///             while let Err(back) = sender.post(pending) {
///                 pending = back;
///                 std::hint::spin_loop();
///             }
///         }
///     });
///     let mut seen = Vec::new();
///     while seen.len() < 10 {
///         seen.extend(receiver.drain());
///     }
///     assert_eq!(seen, (0..10).collect::<Vec<_>>());
/// });
/// ```
///
pub struct EventQueue<E, const N: usize> {
    ring: Queue<E, N>,
}

impl<E, const N: usize> EventQueue<E, N> {
    /// The most events the queue holds at once: `N - 1`.
    pub const CAPACITY: usize = N - 1;

    /// An empty queue; `const`, so it can initialise a `static`.
    pub const fn new() -> Self {
        Self { ring: Queue::new() }
    }

    /// Splits the queue into its posting half and its draining half.
    pub fn split(&mut self) -> (EventSender<'_, E, N>, EventReceiver<'_, E, N>) {
        let (producer, consumer) = self.ring.split();
        (EventSender { producer }, EventReceiver { consumer })
    }

    /// Appends `event`; when the queue is full, returns it as `Err(event)` (never
    /// blocks, never overwrites an older event).
    pub fn post(&mut self, event: E) -> Result<(), E> {
        self.ring.enqueue(event)
    }

    /// Removes and returns the oldest event, or `None` when the queue is empty.
    pub fn pop(&mut self) -> Option<E> {
        self.ring.dequeue()
    }

    /// The number of events waiting.
    pub fn len(&self) -> usize {
        self.ring.len()
    }

    /// Whether no event is waiting.
    pub fn is_empty(&self) -> bool {
        self.ring.is_empty()
    }

    /// Whether a [`post`](Self::post) would be refused.
    pub fn is_full(&self) -> bool {
        self.ring.is_full()
    }

    /// The most events the queue holds at once: `N - 1`.
    pub const fn capacity(&self) -> usize {
        Self::CAPACITY
    }
}

impl<E, const N: usize> Default for EventQueue<E, N> {
    fn default() -> Self {
        Self::new()
    }
}

/// The posting half of a split [`EventQueue`]: lives in the interrupt handler.
pub struct EventSender<'q, E, const N: usize> {
    producer: Producer<'q, E, N>,
}

impl<E, const N: usize> EventSender<'_, E, N> {
    /// Appends `event`; when the queue is full, returns it as `Err(event)`. Never
    /// blocks, never panics, and is wait-free (a few atomic loads and one store).
    #[doc(alias = "try_post")]
    pub fn post(&mut self, event: E) -> Result<(), E> {
        self.producer.enqueue(event)
    }

    /// The number of events waiting (a snapshot: the receiver may be draining).
    pub fn len(&self) -> usize {
        self.producer.len()
    }

    /// Whether no event is waiting (a snapshot).
    pub fn is_empty(&self) -> bool {
        self.producer.len() == 0
    }

    /// Whether a [`post`](Self::post) would be refused right now.
    pub fn is_full(&self) -> bool {
        !self.producer.ready()
    }

    /// The most events the queue holds at once: `N - 1`.
    pub const fn capacity(&self) -> usize {
        EventQueue::<E, N>::CAPACITY
    }
}

/// The draining half of a split [`EventQueue`]: lives in the main loop.
///
/// It is an [`Iterator`] whose `next` takes the oldest waiting event; it returns
/// `None` when the queue is empty *for now*, and events posted later are returned by
/// later calls (so it is not fused).
pub struct EventReceiver<'q, E, const N: usize> {
    consumer: Consumer<'q, E, N>,
}

impl<'q, E, const N: usize> EventReceiver<'q, E, N> {
    /// An iterator over the events waiting *now*: it yields at most as many events as
    /// were queued when `drain` was called, so a main loop that drains once per pass
    /// does bounded work even while an interrupt keeps posting.
    pub fn drain(&mut self) -> Drain<'_, 'q, E, N> {
        let remaining = self.consumer.len();
        Drain {
            receiver: self,
            remaining,
        }
    }

    /// The number of events waiting (a snapshot: the sender may be posting).
    pub fn len(&self) -> usize {
        self.consumer.len()
    }

    /// Whether no event is waiting (a snapshot).
    pub fn is_empty(&self) -> bool {
        !self.consumer.ready()
    }

    /// The most events the queue holds at once: `N - 1`.
    pub const fn capacity(&self) -> usize {
        EventQueue::<E, N>::CAPACITY
    }
}

impl<E, const N: usize> Iterator for EventReceiver<'_, E, N> {
    type Item = E;

    /// Takes the oldest waiting event, or `None` when the queue is empty now.
    fn next(&mut self) -> Option<E> {
        self.consumer.dequeue()
    }

    fn size_hint(&self) -> (usize, Option<usize>) {
        // More may arrive later, so there is no upper bound.
        (self.consumer.len(), None)
    }
}

/// The events that were waiting when [`EventReceiver::drain`] was called, oldest first.
pub struct Drain<'r, 'q, E, const N: usize> {
    receiver: &'r mut EventReceiver<'q, E, N>,
    remaining: usize,
}

impl<E, const N: usize> Iterator for Drain<'_, '_, E, N> {
    type Item = E;

    fn next(&mut self) -> Option<E> {
        if self.remaining == 0 {
            return None;
        }
        self.remaining -= 1;
        self.receiver.consumer.dequeue()
    }

    fn size_hint(&self) -> (usize, Option<usize>) {
        // Only the consumer removes events, so all `remaining` are still there.
        (self.remaining, Some(self.remaining))
    }
}

impl<E, const N: usize> ExactSizeIterator for Drain<'_, '_, E, N> {}
impl<E, const N: usize> core::iter::FusedIterator for Drain<'_, '_, E, N> {}
