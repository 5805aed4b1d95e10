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
 * Timer 1 in CTC mode gives one compare-A interrupt per row (the scan tick, written in assembly in
 * row_tick.c) and, for a blanking longer than RC_LIGHT_AT_ONCE_CYCLES, a compare-B interrupt at the
 * end of the blanking time that re-enables the outputs. Compare B is set from the counter each row,
 * after the blanking write, so a tick delayed by another interrupt still gets its full dark gap (a
 * fixed compare B gave gaps of 14 cycles in simavr when the serial interrupt delayed the tick).
 * GPIOR0 holds the scan's flags (below); the compare-B handler tests one with one instruction.
 * The row interrupt works in r2..r8, which the Makefile keeps out of the compiler's hands. */
#ifndef RC_BOARD_IMPL_H
#define RC_BOARD_IMPL_H
#include <stdint.h>
#include <avr/interrupt.h>
#include <avr/io.h>
#include <avr/wdt.h>

#define RC_PIN_LATCH PB1
#define RC_PIN_OE PB2
/* GPIOR0 bits (SBI, CBI, SBIC and SBIS reach it in one instruction that changes no flag): */
#define RC_OUTPUTS_BIT 0            /* outputs switched on (compare B's handler tests it) */
#define RC_WRAP_BIT 1               /* the next slot to latch is the last of a scan (row_tick.c) */
#define RC_LIGHT_BIT 2              /* outputs on and a blanking the row interrupt serves itself */
#define RC_SMALL_BIT 3              /* blanking <= RC_LIGHT_AT_ONCE_CYCLES (set at tick start) */
#define RC_B2_BIT 4                 /* slots of 2 bytes or more */
#define RC_B3_BIT 5                 /* slots of 3 bytes or more */

/* A blanking of at most this many cycles ends inside the row interrupt, at a fixed distance from the
 * blanking instruction (board/avr328p/row_tick.c counts it); a longer one by compare B. */
#define RC_LIGHT_AT_ONCE_CYCLES 40u

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

/* Each bit is set or cleared by one SBI/CBI, so the row interrupt's own changes to GPIOR0 are never
 * undone by a read-modify-write here. */
static inline void board_outputs(uint8_t on)
{
    if (on) {
        GPIOR0 |= _BV(RC_OUTPUTS_BIT);
        if (GPIOR0 & _BV(RC_SMALL_BIT))
            GPIOR0 |= _BV(RC_LIGHT_BIT);
    } else {
        GPIOR0 &= (uint8_t)~_BV(RC_LIGHT_BIT);
        GPIOR0 &= (uint8_t)~_BV(RC_OUTPUTS_BIT);
        PORTB |= _BV(RC_PIN_OE);
    }
}

static inline void board_watchdog_kick(void) { wdt_reset(); }
static inline void board_wait_for_tick(void) {}
static inline void board_critical_enter(void) { cli(); }
static inline void board_critical_exit(void) { sei(); }

#endif
