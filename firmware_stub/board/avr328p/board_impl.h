/* Board layer for ATmega328P-class boards at 16 MHz (the pin map is the one place it is written).
 *
 *   PB3 (MOSI), PB5 (SCK)  hardware SPI at fosc/2 to the serial input and shift clock of the chain
 *   PB1                    latch (storage-register clock), idle low, pulsed high then low
 *   PB2 (SS)               output-enable of every register, active low; driven high from reset and
 *                          held high by an external pull-up while the pin floats (common practice,
 *                          about 10 kilohm), so the panel is dark through reset and programming.
 *                          As an output it also keeps the SPI in master mode.
 *   PD0/PD1                UART0 to the USB serial bridge
 *
 * Timer 1 in CTC mode gives one compare-A interrupt per row (the scan tick) and a compare-B
 * interrupt at the end of the blanking time that re-enables the outputs. Compare B is set from the
 * counter each row, after the blanking write, so a tick delayed by another interrupt still gets its
 * full dark gap (a fixed compare B gave gaps of 14 cycles in simavr when the serial interrupt
 * delayed the tick). GPIOR0 bit 0 says whether
 * outputs are switched on; the compare-B handler tests it with one instruction. */
#ifndef RC_BOARD_IMPL_H
#define RC_BOARD_IMPL_H
#include <stdint.h>
#include <avr/interrupt.h>
#include <avr/io.h>
#include <avr/wdt.h>

#define RC_PIN_LATCH PB1
#define RC_PIN_OE PB2
#define RC_OUTPUTS_BIT 0            /* in GPIOR0 */

#define RC_RX_SIZE 32u              /* powers of two: the index wraps with a mask; small to keep RAM under 512 bytes */
#define RC_TX_SIZE 16u              /* the longest reply (IDENTITY) is 16 wire bytes */

extern volatile uint8_t rc_rx_buf[RC_RX_SIZE], rc_tx_buf[RC_TX_SIZE];
extern volatile uint8_t rc_rx_head, rc_rx_tail, rc_tx_head, rc_tx_tail;
extern uint16_t rc_blank_cycles;

void board_init(void);
void board_tick_start(uint16_t row_period_us, uint32_t blanking_ns);
void board_tick_stop(void);
void board_serial_put(uint8_t b);

static inline int16_t board_serial_get(void)
{
    uint8_t t = rc_rx_tail;
    if (t == rc_rx_head)
        return -1;
    uint8_t b = rc_rx_buf[t];
    rc_rx_tail = (uint8_t)((t + 1) & (RC_RX_SIZE - 1));
    return b;
}

/* SPCR's DORD bit: 1 sends bit 0 first (ATmega328P datasheet, SPI control register). */
static inline void board_spi_order(uint8_t lsb_first)
{
    if (lsb_first)
        SPCR |= _BV(DORD);
    else
        SPCR &= (uint8_t)~_BV(DORD);
}

static inline void board_spi_put(uint8_t b)
{
    (void)SPSR;                     /* clear a SPIF the row tick's timed shift left set (data sheet: */
    (void)SPDR;                     /* read SPSR with SPIF set, then access SPDR) */
    SPDR = b;
    while (!(SPSR & _BV(SPIF)))
        ;
}

/* The row tick's shift at a fixed RC_SPI_BYTE_CYCLES a byte, with no polling: at fosc/2 a byte
 * leaves the SPI in 16 cycles (ATmega328P data sheet, SPI with SPI2X: SCK = fosc/2, 8 clocks a
 * byte), so writing SPDR 18 cycles after the previous write never collides, and the 2 spare cycles
 * cover any synchronisation. Polling SPIF cost 22 cycles a byte (the wait loop's granularity and the
 * branch back). The last byte is left shifting (the next latch is a row period away); an interrupt
 * inside the loop only lengthens one gap. simavr's SPI model counts a write during a transfer
 * as a collision (tests/test_firmware_sim.py checks there are none). */
#define RC_SPI_BYTE_CYCLES 18
static inline void board_spi_put_slot(const uint8_t *src, uint8_t n)
{
    uint8_t b;
    __asm__ __volatile__(
        "ld %[b], %a[p]+\n\t"
        "out %[spdr], %[b]\n\t"      /* the first byte: 1 + 1 + 1 + 1 + 2 + 12 = 18 to the next out */
        "dec %[n]\n\t"
        "breq 2f\n\t"
        "nop\n\t"
        "1: ld %[b], %a[p]+\n\t"     /* 2 */
        "rjmp .+0\n\t"               /* 2 x 6: the padding */
        "rjmp .+0\n\t"
        "rjmp .+0\n\t"
        "rjmp .+0\n\t"
        "rjmp .+0\n\t"
        "rjmp .+0\n\t"
        "out %[spdr], %[b]\n\t"      /* 1 */
        "dec %[n]\n\t"               /* 1 */
        "brne 1b\n\t"                /* 2 taken: 18 a byte */
        "2:\n\t"
        : [b] "=&r"(b), [p] "+e"(src), [n] "+r"(n)
        : [spdr] "I"(_SFR_IO_ADDR(SPDR))
        : "memory");
}

static inline void board_latch(void)
{
    PORTB |= _BV(RC_PIN_LATCH);     /* a real part latches on this rising edge */
    PORTB &= (uint8_t)~_BV(RC_PIN_LATCH);
}

static inline void board_blank(void) { PORTB |= _BV(RC_PIN_OE); }

/* End of blanking: compare B, counted from now; then let it in even while the rest of the tick
 * runs. A compare value the counter reaches before its flag is cleared would never match this row
 * (the panel stayed dark with blanking_us = 0), so the counter is read again after arming: if the
 * blanking time has already passed, output-enable goes active here (if outputs are on). A late
 * second activation by compare B is harmless. CONFIGURE keeps the compare inside the row period
 * (RC_MIN_LIGHT_NS). */
static inline void board_unblank_later(void)
{
    uint16_t t = TCNT1;
    OCR1B = (uint16_t)(t + rc_blank_cycles);
    TIFR1 = _BV(OCF1B);
    if ((uint16_t)(TCNT1 - t) >= rc_blank_cycles && (GPIOR0 & _BV(RC_OUTPUTS_BIT)))
        PORTB &= (uint8_t)~_BV(RC_PIN_OE);
    sei();
}

static inline void board_outputs(uint8_t on)
{
    if (on) {
        GPIOR0 |= _BV(RC_OUTPUTS_BIT);
    } else {
        GPIOR0 &= (uint8_t)~_BV(RC_OUTPUTS_BIT);
        PORTB |= _BV(RC_PIN_OE);
    }
}

static inline void board_watchdog_kick(void) { wdt_reset(); }
static inline void board_wait_for_tick(void) {}
static inline void board_critical_enter(void) { cli(); }
static inline void board_critical_exit(void) { sei(); }

#endif
