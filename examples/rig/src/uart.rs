//! The CMSDK APB UART0 of the mps2-an386 board (QEMU connects it to `-serial`): polled, no
//! interrupts. Register map (ARM CMSDK APB UART): DATA 0x00, STATE 0x04 (bit 0 TX full,
//! bit 1 RX full), CTRL 0x08 (bit 0 TX enable, bit 1 RX enable), BAUDDIV 0x10.

const BASE: usize = 0x4000_4000;
const DATA: usize = BASE;
const STATE: usize = BASE + 0x04;
const CTRL: usize = BASE + 0x08;
const BAUDDIV: usize = BASE + 0x10;

fn read(addr: usize) -> u32 {
    // SAFETY: `addr` is one of the UART0 registers above, a valid, aligned MMIO word on this
    // board; a volatile read has no other effect than the register's own (RX pop on DATA).
    unsafe { core::ptr::read_volatile(addr as *const u32) }
}

fn write(addr: usize, v: u32) {
    // SAFETY: as in `read`; writes go only to the UART0 registers above.
    unsafe { core::ptr::write_volatile(addr as *mut u32, v) }
}

/// UART0, enabled for both directions.
pub struct Uart;

impl Uart {
    /// Enable TX and RX. The divider must be at least 16 (QEMU refuses to send otherwise);
    /// the emulated line has no real baud rate.
    pub fn open() -> Self {
        write(BAUDDIV, 16);
        write(CTRL, 0b11);
        Uart
    }

    /// One received byte, if there is one.
    #[inline(always)]
    pub fn read(&self) -> Option<u8> {
        if read(STATE) & 0b10 != 0 {
            Some(read(DATA) as u8)
        } else {
            None
        }
    }

    /// Send bytes, waiting while the transmitter is full.
    pub fn write_all(&self, bytes: &[u8]) {
        for b in bytes {
            while read(STATE) & 0b01 != 0 {}
            write(DATA, *b as u32);
        }
    }
}
