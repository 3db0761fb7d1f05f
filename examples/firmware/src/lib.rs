//! Example firmware: a reel-winder motor on a half-bridge, its PWM
//! settings generated at build time from `hardware/` by pwmplan.
//!
//! The generated module holds the timer registers, the dead-time code and
//! the duty limits; this crate only wires them to an `embedded-hal` PWM
//! channel. Bring-up order (the generated module's comment says the same):
//! outputs disabled and the compare at zero before the timer starts.

#![no_std]

/// The settings pwmplan generated for `hardware/drive.yaml`.
pub mod drive_pwm {
    include!(concat!(env!("OUT_DIR"), "/drive_pwm.rs"));
}

use drive_pwm::Duty;
use embedded_hal::pwm::SetDutyCycle;

/// The winder's PWM output, always within the plan's duty limits.
pub struct Winder<P: SetDutyCycle> {
    pwm: P,
    duty: Duty,
}

impl<P: SetDutyCycle> Winder<P> {
    /// Take the channel and drive it off first (the safe state).
    pub fn new(mut pwm: P) -> Result<Self, P::Error> {
        drive_pwm::apply(&mut pwm, Duty::OFF)?;
        Ok(Winder {
            pwm,
            duty: Duty::OFF,
        })
    }

    /// Run at `permille` of full duty (0 is off), clamped to the limits the
    /// plan allows (minimum pulse, bootstrap refresh).
    pub fn run_permille(&mut self, permille: u32) -> Result<(), P::Error> {
        self.set(Duty::from_permille(permille))
    }

    /// Stop: output off.
    pub fn stop(&mut self) -> Result<(), P::Error> {
        self.set(Duty::OFF)
    }

    /// The compare value last written, in timer counts.
    pub fn compare(&self) -> u32 {
        self.duty.counts()
    }

    /// Give the channel back.
    pub fn release(self) -> P {
        self.pwm
    }

    fn set(&mut self, duty: Duty) -> Result<(), P::Error> {
        drive_pwm::apply(&mut self.pwm, duty)?;
        self.duty = duty;
        Ok(())
    }
}

/// The PWM period in timer counts and the timer's input clock, for the
/// code that programs the timer itself.
pub const PERIOD_TICKS: u32 = drive_pwm::PERIOD_TICKS;
pub const CLOCK_HZ: u64 = drive_pwm::CLOCK_HZ;
