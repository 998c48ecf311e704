//! Start-up: clocks, pins and peripherals configured as the board's table says, the board
//! installed behind its critical-section mutex.

use embedded_hal::pwm::SetDutyCycle as _;
use rp2040_hal as hal;

use hal::adc::{Adc, AdcPin};
use hal::clocks::init_clocks_and_plls;
use hal::dma::DMAExt;
use hal::pac;
use hal::Clock as _;

use crate::board::{self, Board, GateSlices, CHANNELS, HOLD_TOP};
use crate::capture::{self, Engine, CAPACITY};
use crate::clock::TimerClock;
use crate::comparator::{Comparators, REF_STEPS};
use crate::design;
use coilwise_rp2040_arith::adc::{pacing_ok, PACING_SAMPLES, PACING_TOLERANCE};

/// Crystal on the board, Hz.
const XTAL_HZ: u32 = 12_000_000;

/// NVIC priority of the service interrupt (TIMER alarm 0): the lowest of the four levels, so
/// that the board's capture and comparator interrupts preempt the driver's fits.
pub const SERVICE_PRIORITY: u8 = 0xC0;

/// Why start-up stopped.
#[derive(Clone, Copy, Debug, defmt::Format)]
pub enum StartError {
    /// The clocks could not be started at 125 MHz system / 48 MHz ADC.
    Clocks,
    /// A pin or a static buffer could not be taken.
    Pins,
    /// The board was installed twice.
    Board,
    /// The ADC's start or pacing is not what the capture timing assumes (see the log).
    Adc,
    /// A channel design or its limits are invalid.
    Design,
    /// The driver refused to start (its error is logged).
    Driver,
}

/// The peripherals as the application uses them.
pub struct Hardware {
    /// Switch, hold PWM and sense of each channel.
    pub handles: [(board::Switch, board::Hold, board::Sense); CHANNELS],
    /// The TIMER as tick source and delay.
    pub clock: TimerClock,
    /// TIMER alarm 0, for the service interrupt.
    pub alarm: hal::timer::Alarm0,
}

/// The operator's re-enable push button (GPIO15 to ground, internal pull-up).
pub type Button =
    hal::gpio::Pin<hal::gpio::DynPinId, hal::gpio::FunctionSioInput, hal::gpio::PullUp>;

/// Clocks (125 MHz system, 48 MHz ADC/USB, 1 MHz TIMER tick), gate PWM slices, comparator
/// references and inputs, ADC + DMA; the ADC's start lead measured and its pacing checked
/// (a failed check stops here, before any gate is driven); the board installed and its
/// interrupts unmasked. The re-enable button comes back separately, for the main loop.
pub fn setup() -> Result<(Hardware, Button), StartError> {
    let mut pac = pac::Peripherals::take().ok_or(StartError::Clocks)?;
    let mut watchdog = hal::Watchdog::new(pac.WATCHDOG);
    let clocks = init_clocks_and_plls(
        XTAL_HZ,
        pac.XOSC,
        pac.CLOCKS,
        pac.PLL_SYS,
        pac.PLL_USB,
        &mut pac.RESETS,
        &mut watchdog,
    )
    .map_err(|_| StartError::Clocks)?;
    if clocks.system_clock.freq().to_Hz() != board::SYS_HZ
        || clocks.adc_clock.freq().to_Hz() != capture::ADC_HZ
    {
        return Err(StartError::Clocks);
    }
    let mut timer = hal::Timer::new(pac.TIMER, &mut pac.RESETS, &clocks);
    let alarm = timer.alarm_0().ok_or(StartError::Clocks)?;
    let sio = hal::Sio::new(pac.SIO);
    let pins = hal::gpio::Pins::new(
        pac.IO_BANK0,
        pac.PADS_BANK0,
        sio.gpio_bank0,
        &mut pac.RESETS,
    );

    // Gate PWM: slices 1 and 2 at HOLD_HZ, compare 0 before the pins are handed over (the
    // board then forces the pads low through their output override).
    let pwm = hal::pwm::Slices::new(pac.PWM, &mut pac.RESETS);
    let (mut s1, mut s2, mut s3) = (pwm.pwm1, pwm.pwm2, pwm.pwm3);
    let _ = s1.channel_a.set_duty_cycle(0);
    let _ = s2.channel_a.set_duty_cycle(0);
    s1.set_top(HOLD_TOP);
    s2.set_top(HOLD_TOP);
    s1.set_div_int(1);
    s2.set_div_int(1);
    let gate0 = s1.channel_a.output_to(pins.gpio2.into_pull_down_disabled());
    let gate1 = s2.channel_a.output_to(pins.gpio4.into_pull_down_disabled());
    s1.enable();
    s2.enable();

    // Comparator references on slice 3 (10 bits, 122 kHz) and the comparator inputs.
    s3.set_top(REF_STEPS - 1);
    s3.set_div_int(1);
    let _ = s3.channel_a.output_to(pins.gpio6);
    let _ = s3.channel_b.output_to(pins.gpio7);
    s3.enable();
    let button = pins.gpio15.into_pull_up_input().into_dyn_pin();
    let cmp_pins = [
        pins.gpio10.into_floating_input().into_dyn_pin(),
        pins.gpio11.into_floating_input().into_dyn_pin(),
    ];

    // ADC inputs, the ADC itself (kept for the life of the program) and DMA channel 0.
    let sense0 = AdcPin::new(pins.gpio26.into_floating_disabled().into_dyn_pin())
        .map_err(|_| StartError::Pins)?;
    let sense1 = AdcPin::new(pins.gpio27.into_floating_disabled().into_dyn_pin())
        .map_err(|_| StartError::Pins)?;
    let adc: &'static mut Adc =
        cortex_m::singleton!(: Adc = Adc::new(pac.ADC, &mut pac.RESETS)).ok_or(StartError::Pins)?;
    let dma = pac.DMA.split(&mut pac.RESETS);
    let buf0 = cortex_m::singleton!(: [u16; CAPACITY] = [0; CAPACITY]).ok_or(StartError::Pins)?;
    let buf1 = cortex_m::singleton!(: [u16; CAPACITY] = [0; CAPACITY]).ok_or(StartError::Pins)?;
    let mut engine = Engine::new(adc, dma.ch0, [sense0, sense1], [buf0, buf1]);
    let adc_first_result = engine.measure_lead(|| board::timer_now().0);
    let adc_pacing = engine.measure_pacing(|| board::timer_now().0);
    match adc_first_result {
        Some(t) => defmt::info!("ADC: first result {=u32} us after start (100 us period)", t),
        None => defmt::error!("ADC: no result within 1 ms of start: clk_adc not running?"),
    }
    match adc_pacing {
        Some(t) => defmt::info!(
            "ADC: {=u32} conversions at 2 us took {=u32} us (want {=u32} +/- {=u32})",
            PACING_SAMPLES,
            t,
            PACING_SAMPLES * capture::MIN_PERIOD,
            PACING_TOLERANCE
        ),
        None => defmt::error!("ADC: pacing not measurable (FIFO overflow or no results)"),
    }
    if adc_first_result.is_none() || !adc_pacing.is_some_and(pacing_ok) {
        return Err(StartError::Adc);
    }

    let clock = TimerClock::new(timer).ok_or(StartError::Clocks)?;
    let comparators = Comparators::new(s3, cmp_pins, board::timer_now());
    let handles = Board::install(
        [gate0.into_dyn_pin(), gate1.into_dyn_pin()],
        GateSlices { ch0: s1, ch1: s2 },
        engine,
        comparators,
        [design::scale(0), design::scale(1)],
    )
    .ok_or(StartError::Board)?;
    let mut core = cortex_m::Peripherals::take().ok_or(StartError::Clocks)?;
    board::enable_interrupts(&mut core.NVIC);
    // SAFETY: TIMER_IRQ_0 is still masked, and its handler takes shared state only through
    // critical sections; a lower priority only lets the board's interrupts preempt it.
    unsafe {
        core.NVIC
            .set_priority(pac::Interrupt::TIMER_IRQ_0, SERVICE_PRIORITY)
    };
    let hw = Hardware {
        handles,
        clock,
        alarm,
    };
    Ok((hw, button))
}
