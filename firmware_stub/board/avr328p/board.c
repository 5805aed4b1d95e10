/* ATmega328P-class board layer: start-up, UART ring buffers, row timer, watchdog, main loop. */
#include <stdint.h>
#include <avr/interrupt.h>
#include <avr/io.h>
#include <avr/wdt.h>
#include "board.h"
#include "receiver.h"

#ifndef F_CPU
#define F_CPU 16000000UL
#endif
#ifndef RC_BAUD
#define RC_BAUD 115200UL
#endif
#define RC_CYCLES_PER_US (F_CPU / 1000000UL)

volatile uint8_t rc_rx_buf[RC_RX_SIZE], rc_tx_buf[RC_TX_SIZE];
volatile uint8_t rc_rx_head, rc_rx_tail, rc_tx_head, rc_tx_tail;
uint16_t rc_blank_cycles;
uint8_t rc_slot_rest;                              /* bytes of a slot after the third (row_tick.c) */

/* After a watchdog reset the watchdog stays enabled at its shortest period; switch it off before
 * anything else (avr-libc <avr/wdt.h> documentation). */
void rc_early_init(void) __attribute__((naked, used, section(".init3")));
void rc_early_init(void)
{
    MCUSR = 0;
    wdt_disable();
}

void board_init(void)
{
    PORTB = _BV(RC_PIN_OE);                         /* outputs disabled before the pin drives */
    DDRB = _BV(RC_PIN_OE) | _BV(RC_PIN_LATCH) | _BV(PB3) | _BV(PB5);
    GPIOR0 = 0;
    SPCR = _BV(SPE) | _BV(MSTR);                    /* mode 0, MSB first until CONFIGURE says otherwise */
    SPSR = _BV(SPI2X);                              /* fosc/2 */
    UBRR0 = (uint16_t)(F_CPU / 8UL / RC_BAUD - 1UL);
    UCSR0A = _BV(U2X0);
    UCSR0C = _BV(UCSZ01) | _BV(UCSZ00);             /* 8N1 */
    UCSR0B = _BV(RXCIE0) | _BV(RXEN0) | _BV(TXEN0);
    wdt_enable(WDTO_15MS);
    sei();
}

void board_tick_start(uint16_t row_period_us, uint32_t blanking_ns)
{
    uint16_t top = (uint16_t)(row_period_us * RC_CYCLES_PER_US - 1u);
    /* Rounded up: the dark gap is never shorter than asked. */
    rc_blank_cycles = (uint16_t)((blanking_ns * RC_CYCLES_PER_US + 999UL) / 1000UL);
    uint8_t small = rc_blank_cycles <= RC_LIGHT_AT_ONCE_CYCLES, bpr = rc_scan.bpr;
    TCCR1B = 0;
    TCCR1A = 0;
    TCNT1 = 0;
    OCR1A = top;
    OCR1B = top;                                    /* set per row by the row interrupt */
    TIFR1 = _BV(OCF1A) | _BV(OCF1B);
    /* The scan's flags for the row interrupt (board_impl.h); the outputs are off (CONFIGURE). */
    rc_slot_rest = (uint8_t)(bpr > 3u ? bpr - 3u : 0u);
    GPIOR0 = (uint8_t)((small ? _BV(RC_SMALL_BIT) : 0) | (bpr >= 2u ? _BV(RC_B2_BIT) : 0) |
                       (bpr >= 3u ? _BV(RC_B3_BIT) : 0) | (rc_scan.next == rc_scan.end ? _BV(RC_WRAP_BIT) : 0));
    /* A short blanking ends inside the row interrupt: compare B's interrupt would only cost time. The
     * row interrupt masks itself with GPIOR1 and unmasks with GPIOR2 (row_tick.c). */
    GPIOR1 = (uint8_t)(small ? 0 : _BV(OCIE1B));
    GPIOR2 = (uint8_t)(_BV(OCIE1A) | GPIOR1);
    TIMSK1 = GPIOR2;
    TCCR1B = _BV(WGM12) | _BV(CS10);                /* CTC on OCR1A, no prescaler */
}

void board_tick_stop(void)
{
    TIMSK1 = 0;
    TCCR1B = 0;
}

void board_serial_put(uint8_t b)
{
    uint8_t next = (uint8_t)((rc_tx_head + 1) & (RC_TX_SIZE - 1));
    while (next == rc_tx_tail)
        ;                                            /* the UDRE interrupt makes room */
    rc_tx_buf[rc_tx_head] = b;
    rc_tx_head = next;
    UCSR0B |= _BV(UDRIE0);
}

ISR(USART_RX_vect)
{
    uint8_t b = UDR0;
    uint8_t h = rc_rx_head, next = (uint8_t)((h + 1) & (RC_RX_SIZE - 1));
    if (next != rc_rx_tail) {                        /* full: the byte is lost, CRC catches it */
        rc_rx_buf[h] = b;
        rc_rx_head = next;
    }
}

ISR(USART_UDRE_vect)
{
    uint8_t t = rc_tx_tail;
    if (t == rc_tx_head) {
        UCSR0B &= (uint8_t)~_BV(UDRIE0);
        return;
    }
    UDR0 = rc_tx_buf[t];
    rc_tx_tail = (uint8_t)((t + 1) & (RC_TX_SIZE - 1));
}

/* End of a blanking longer than RC_LIGHT_AT_ONCE_CYCLES: output-enable active (low) if outputs are
 * on. Touches no register and no flag, so it needs no prologue. */
ISR(TIMER1_COMPB_vect, ISR_NAKED)
{
    __asm__ __volatile__(
        "sbic %[gpior], %[bit]\n\t"
        "cbi %[port], %[oe]\n\t"
        "reti\n\t"
        :: [gpior] "I"(_SFR_IO_ADDR(GPIOR0)), [bit] "I"(RC_OUTPUTS_BIT),
           [port] "I"(_SFR_IO_ADDR(PORTB)), [oe] "I"(RC_PIN_OE));
}

int main(void)
{
    rc_init();
    for (;;) {
        int16_t c = board_serial_get();
        if (c >= 0)
            rc_rx_byte((uint8_t)c);
        rc_idle();
    }
}
