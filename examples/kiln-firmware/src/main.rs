//! A firmware-style detent example on the host: a kiln controller.
//!
//! The shape is the usual bare-metal one. A timer interrupt samples the thermocouple
//! every 10 ms and posts `TempTick` into a [`detent::EventQueue`]; button interrupts
//! post `Start`/`Stop`/`Reset`. The main loop drains the queue and steps the machine,
//! whose hooks read the sensors and drive the relay outputs. Here a thread plays the
//! interrupts and a small thermal model plays the kiln.
//!
//! The machine comes from `kiln.detent` through the file form of the macro; an edit
//! of the spec rebuilds this crate.

use detent::EventQueue;

#[detent::machine_file(file = "kiln.detent")]
pub mod kiln {
    /// The kiln's set point, degrees Celsius.
    pub const SET_POINT_C: i32 = 900;
    /// Above this the kiln faults.
    pub const LIMIT_C: i32 = 1250;
    /// Below this the kiln counts as cool.
    pub const COOL_C: i32 = 60;
}

use kiln::{Event, Machine, Outputs};

/// The simulated plant and the hooks the machine calls.
struct Board {
    temperature_c: i32,
    soak_ticks_left: u32,
    faults: u32,
    buzzes: u32,
}

impl kiln::Hooks for Board {
    fn at_setpoint(&mut self) -> bool {
        self.temperature_c >= kiln::SET_POINT_C
    }
    fn over_temp(&mut self) -> bool {
        self.temperature_c > kiln::LIMIT_C
    }
    fn soak_done(&mut self) -> bool {
        self.soak_ticks_left == 0
    }
    fn cool(&mut self) -> bool {
        self.temperature_c < kiln::COOL_C
    }
    fn start_soak_timer(&mut self) {
        self.soak_ticks_left = 5;
        println!("          action: soak timer started (5 ticks)");
    }
    fn log_fault(&mut self) {
        self.faults += 1;
        println!("          action: fault logged at {} C", self.temperature_c);
    }
    fn sound_buzzer(&mut self) {
        self.buzzes += 1;
        println!("          action: buzzer");
    }
}

impl Board {
    /// One 10 ms slice of the thermal model, given the relay outputs.
    fn advance(&mut self, outputs: Outputs) {
        if outputs.heater {
            // The element's own thermostat holds the set point once reached.
            self.temperature_c += if self.temperature_c < kiln::SET_POINT_C {
                75
            } else {
                5
            };
        } else if outputs.vent {
            self.temperature_c -= 90;
        } else {
            self.temperature_c -= 10;
        }
        self.temperature_c = self.temperature_c.max(20);
        self.soak_ticks_left = self.soak_ticks_left.saturating_sub(1);
    }
}

/// What the interrupts post, in order: a firing, then a second firing whose lid is
/// opened half way, a reset while hot (refused), and a reset once cool.
fn interrupt_script() -> Vec<Event> {
    let mut script = vec![Event::Start];
    script.extend(std::iter::repeat_n(Event::TempTick, 35));
    script.push(Event::Start);
    script.extend(std::iter::repeat_n(Event::TempTick, 6));
    script.push(Event::LidOpened);
    script.push(Event::Reset);
    script.extend(std::iter::repeat_n(Event::TempTick, 8));
    script.push(Event::Reset);
    script
}

fn main() {
    let mut queue: EventQueue<Event, 16> = EventQueue::new();
    let (mut sender, mut receiver) = queue.split();
    let mut machine = Machine::new();
    let mut board = Board {
        temperature_c: 20,
        soak_ticks_left: 0,
        faults: 0,
        buzzes: 0,
    };
    let script = interrupt_script();
    let total = script.len();
    println!("kiln: {:?}, {} C", machine.state(), board.temperature_c);
    std::thread::scope(|s| {
        // The "interrupts": post each event; a full queue hands it back, so retry.
        s.spawn(move || {
            for event in script {
                let mut pending = event;
                while let Err(back) = sender.post(pending) {
                    pending = back;
                    std::thread::yield_now();
                }
            }
        });
        // The main loop: drain, step, drive the relays.
        let mut handled = 0;
        while handled < total {
            for event in receiver.drain() {
                handled += 1;
                let from = machine.state();
                let outputs = match machine.step(event, &mut board) {
                    Ok(outputs) => outputs,
                    Err(detent::Rejected) => machine.outputs(),
                };
                if machine.state() != from {
                    println!(
                        "{handled:>4}: {:<8} --{:?}--> {:<8} heater={} vent={} lamp={} ({} C)",
                        from.name(),
                        event,
                        machine.state().name(),
                        outputs.heater,
                        outputs.vent,
                        outputs.fault_lamp,
                        board.temperature_c
                    );
                }
                if event == Event::TempTick {
                    board.advance(outputs);
                }
            }
            std::thread::yield_now();
        }
    });
    println!(
        "kiln: {:?}, {} C; {} fault(s) logged, {} buzz(es)",
        machine.state(),
        board.temperature_c,
        board.faults,
        board.buzzes
    );
}
