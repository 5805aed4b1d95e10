/* The row interrupt of the ATmega328P-class board, written instruction by instruction.
 *
 * It does what core/scan.h does for the host build (blank, latch, end of blanking armed, watchdog fed,
 * the swap to a shown frame between scans only, the next slot shifted) in about 33 + 17 cycles a byte
 * of the slot (simavr, tests/bench/bench_firmware.py), against 108 + 18 a byte for the compiled
 * version. Where the cycles went and how they came back:
 *   - registers: the handler works in r2..r8, which the whole AVR build keeps out of the compiler's
 *     hands (-ffixed-r2 .. -ffixed-r8 in the Makefile; tests/test_firmware_sim.py disassembles the
 *     ELF and checks that no other code names them), so nothing is pushed or popped: Z goes to r2:r3
 *     (MOVW, 1 cycle each way), SREG to r4.
 *   - the bookkeeping, the end-of-blanking timer and the watchdog run in the gaps while the SPI
 *     shifts a byte, not before the first byte; the last byte is left shifting.
 *   - while interrupts are on (from cycle 52) the handler masks its own interrupt (RC_MASK_SELF).
 *   - the end of a scan is a flag in GPIOR0 set by the tick before (one SBIC here); the rare path
 *     (once a scan) picks the buffer first and ends the blanking at the same cycle; it swaps the
 *     buffers while byte 2 shifts. rc_scan.scans is not counted here: nothing on the board reads it
 *     (the host build's scan.h counts it for the tests).
 *
 * Byte spacing: 17 cycles from one write of SPDR to the next. ATmega328P data sheet (DS40002061A,
 * section 19.5.2 and table 19-5): with SPI2X and SPR1:0 = 0 the SCK period is two CPU cycles, so a
 * byte (8 SCK periods) takes 16 cycles; the transmit side is single buffered, and a write to SPDR
 * during a transfer sets WCOL and is not sent. The data sheet does not say in which cycle of the OUT
 * the transfer starts, so one cycle is kept spare: 17, not 16 (18 before). simavr's SPI model in
 * harness/harness.c completes a byte 16 cycles after the write and counts collisions; the tests
 * require none.
 *
 * Dark gap: the counter read at cycle 24 plus the blanking gives compare B; the flag of a match that
 * came before the write is cleared at cycle 44. A blanking of at most RC_LIGHT_AT_ONCE_CYCLES (40:
 * the distance from the blanking SBI at cycle 7 to the CBI at cycle 47) is served here: at the CBI
 * the blanking has passed, whatever the delay of the tick (the distance is fixed: interrupts stay off
 * until the SEI after it), and compare B's interrupt is off (board_tick_start). A longer blanking
 * matches after cycle 24 + 41 = 65, well after the flag is cleared, so compare B always sees it (the
 * once-a-scan path reads the counter at 42 and clears the flag at 63: 42 + 41 = 83, after it too).
 * This replaces the C version's second read of the counter: the same guarantee, decided once at
 * CONFIGURE instead of every row.
 *
 * Cycle numbers in the comments count from the interrupt request, in the common path: 4 cycles of
 * interrupt response and 3 for the JMP in the vector table (ATmega328P data sheet, "Interrupt
 * Response Time"; instruction set summary, from memory) put the first instruction at cycle 7. */
#include <stdint.h>
#include <avr/interrupt.h>
#include <avr/io.h>
#include "board.h"
#include "receiver.h"

extern uint8_t rc_slot_rest;

/* The counter read, and compare B computed (t + blanking, 16 bits; r5 is free until byte 2 is
 * fetched). 10 cycles. */
#define RC_UNBLANK_COMPUTE \
    "lds r6, %[tcnt]\n\t"           /* 2  TCNT1L (latches TCNT1H for the next read) */ \
    "lds r7, %[tcnt]+1\n\t"         /* 2  TCNT1H */ \
    "lds r5, %[blank]\n\t"          /* 2 */ \
    "add r6, r5\n\t"                /* 1 */ \
    "lds r5, %[blank]+1\n\t"        /* 2 */ \
    "adc r7, r5\n\t"                /* 1 */

/* With interrupts on, a row period shorter than this handler plus the serial handlers nested in it
 * (20 us rows, 10-byte slots and traffic both ways come close) would let compare A nest in itself and
 * overwrite r2..r8. So its interrupt is off from here to the return: a late compare A then waits and
 * runs right after (one row a little short), as any interrupt that comes while another runs.
 * GPIOR1 holds TIMSK1 without OCIE1A, GPIOR2 with it (board_tick_start). */
#define RC_MASK_SELF \
    "in r7, %[gpior1]\n\t"          /* 1 */ \
    "sts %[timsk], r7\n\t"          /* 2 */

/* Compare B armed, its flag cleared, a short blanking ended here, the watchdog fed, the row
 * interrupt itself masked, interrupts on. 13 cycles (14 when the panel lights here). */
#define RC_UNBLANK_ARM \
    "sts %[ocr]+1, r7\n\t"          /* 2  high byte first (16-bit register access through TEMP) */ \
    "sts %[ocr], r6\n\t"            /* 2 */ \
    "sbi %[tifr], %[ocf]\n\t"       /* 2  SBI on TIFR1 clears only this flag (data sheet, I/O memory) */ \
    "sbic %[gpior], %[light]\n\t"   /* 2 skip / 1 */ \
    "cbi %[port], %[oe]\n\t"        /* 2  cycle 47: lit (outputs on and a blanking <= 40 cycles) */ \
    "wdr\n\t"                       /* 1 */ \
    RC_MASK_SELF                    /* 3 */ \
    "sei\n\t"                       /* 1  the serial interrupts may come in from here */

/* 10 cycles of padding in the shift loops. */
#define RC_PAD10 "rjmp .+0\n\trjmp .+0\n\trjmp .+0\n\trjmp .+0\n\trjmp .+0\n\t"

ISR(TIMER1_COMPA_vect, ISR_NAKED)
{
    __asm__ __volatile__(
        /* -- common path: the slot at rc_scan.next -- */
        "sbi %[port], %[oe]\n\t"            /*  7 2  blank */
        "sbi %[port], %[latch]\n\t"         /*  9 2  latch pulse: the slot shifted last tick appears */
        "cbi %[port], %[latch]\n\t"         /* 11 2 */
        "movw r2, r30\n\t"                  /* 13 1  Z saved */
        "lds r30, %[next]\n\t"              /* 14 2 */
        "lds r31, %[next]+1\n\t"            /* 16 2 */
        "sbic %[gpior], %[wrap]\n\t"        /* 18 2  (1 and the jump when a scan just ended) */
        "rjmp .Lrc_wrap%=\n\t"
        "ld r5, Z+\n\t"                     /* 20 2 */
        "out %[spdr], r5\n\t"               /* 22 1  byte 1 */
        "in r4, __SREG__\n\t"               /* 23 1  before the first instruction that sets a flag */
        RC_UNBLANK_COMPUTE                  /* 24 10 */
        "nop\n\t"                           /* 34 1 */
        "sbis %[gpior], %[b2]\n\t"          /* 35 2  (1 and the jump for one-byte slots) */
        "rjmp .Lrc_one%=\n\t"
        "ld r5, Z+\n\t"                     /* 37 2 */
        "out %[spdr], r5\n\t"               /* 39 1  byte 2, 17 after byte 1 */
        ".Lrc_arm%=:\n\t"
        RC_UNBLANK_ARM                      /* 40 13 */
        "lds r8, %[rest]\n\t"               /* 53 2  bytes after byte 3 */
        "sbis %[gpior], %[b3]\n\t"          /* 55 2  (1 and the jump for slots under 3 bytes) */
        "rjmp .Lrc_tail%=\n\t"
        ".Lrc_loop%=:\n\t"
        "ld r5, Z+\n\t"                     /* 57 2 */
        "out %[spdr], r5\n\t"               /* 59 1  byte 3, 20 after byte 2 (then every 17 cycles) */
        "dec r8\n\t"                        /*  1 */
        "brmi .Lrc_tail%=\n\t"              /*  1 (2 when it was the last) */
        RC_PAD10                            /* 10 */
        "rjmp .Lrc_loop%=\n\t"              /*  2  + ld 2: 17 from OUT to OUT */
        /* -- every path ends here: Z is the slot after the one shifted; the last byte is still on
         *    the wire (the next latch is a row period away). 18 cycles with the RETI. -- */
        ".Lrc_tail%=:\n\t"
        "sts %[next], r30\n\t"              /*  2 */
        "sts %[next]+1, r31\n\t"            /*  2 */
        "lds r6, %[end]\n\t"                /*  2  low bytes decide: a frame is under 256 bytes */
        "cp r30, r6\n\t"                    /*  1 */
        "brne 1f\n\t"                       /*  2 (1) */
        "sbi %[gpior], %[wrap]\n\t"         /*    2  the next tick ends the scan */
        "1:\n\t"
        "out __SREG__, r4\n\t"              /*  1  interrupts off again (I was 0 when it was saved) */
        "in r6, %[gpior2]\n\t"              /*  1  compare A's interrupt back on: a match that came */
        "sts %[timsk], r6\n\t"              /*  2  meanwhile is served after the RETI */
        "movw r30, r2\n\t"                  /*  1 */
        "reti\n\t"                          /*  4 */
        /* -- one-byte slots: 2 cycles for the ld that did not happen, so the arming is at the
         *    same cycle as on the other paths -- */
        ".Lrc_one%=:\n\t"                   /* 38 */
        "rjmp .Lrc_arm%=\n\t"               /* 38 2 -> 40 */
        /* -- the slot just latched was the last of a scan (once a scan): slot 0 of the buffer the
         *    panel shows next (the back one when a shown frame waits for the swap), the end of
         *    blanking at the same cycle as above, then the swap itself while byte 2 shifts -- */
        ".Lrc_wrap%=:\n\t"                  /* 21 */
        "in r4, __SREG__\n\t"               /* 21 1 */
        "lds r30, %[front]\n\t"             /* 22 2 */
        "lds r31, %[front]+1\n\t"           /* 24 2 */
        "lds r8, %[show]\n\t"               /* 26 2  0 or 1 */
        "lds r7, %[swap]\n\t"               /* 28 2  0 or 1 */
        "bst r8, 0\n\t"                     /* 30 1  T: a SHOW waits (SREG is saved in r4) */
        "and r7, r8\n\t"                    /* 31 1  ... with a fresh frame: swap now */
        "breq 1f\n\t"                       /* 32 1 (2) */
        "lds r30, %[back]\n\t"              /* 33 2 */
        "lds r31, %[back]+1\n\t"            /* 35 2 */
        "rjmp 2f\n\t"                       /* 37 2 */
        "1: cbi %[gpior], %[wrap]\n\t"      /* 34 5: the same 39 as with the swap (which clears */
        "rjmp .+0\n\t"                      /*       the flag in .Lrc_show) */
        "nop\n\t"
        "2: ld r5, Z+\n\t"                  /* 39 2 */
        "out %[spdr], r5\n\t"               /* 41 1  byte 1 */
        "lds r6, %[tcnt]\n\t"               /* 42 2 */
        "lds r7, %[tcnt]+1\n\t"             /* 44 2 */
        "sbic %[gpior], %[light]\n\t"       /* 46 2 / 1 */
        "cbi %[port], %[oe]\n\t"            /* 47 2  the same cycle as the common path */
        "lds r5, %[blank]\n\t"              /* 48 2 (49 when lit) */
        "add r6, r5\n\t"                    /* 50 1 */
        "lds r5, %[blank]+1\n\t"            /* 51 2 */
        "adc r7, r5\n\t"                    /* 53 1 */
        "sbis %[gpior], %[b2]\n\t"          /* 54 2 */
        "rjmp 3f\n\t"
        "ld r5, Z+\n\t"                     /* 56 2 */
        "out %[spdr], r5\n\t"               /* 58 1  byte 2, 17 after byte 1 */
        "3: sts %[ocr]+1, r7\n\t"           /* 59 2  compare B: counter read at 42 + blanking */
        "sts %[ocr], r6\n\t"                /* 61 2 */
        "sbi %[tifr], %[ocf]\n\t"           /* 63 2  a blanking over 40 matches at 42 + 41 or later */
        "wdr\n\t"                           /* 65 1 */
        RC_MASK_SELF                        /* 66 3 */
        "sei\n\t"                           /* 69 1 */
        "brts .Lrc_show%=\n\t"              /* 70 1  a SHOW waits: served now */
        ".Lrc_more%=:\n\t"
        "lds r8, %[rest]\n\t"               /* 71 2 */
        "sbic %[gpior], %[b3]\n\t"          /* 73 1 */
        "rjmp .Lrc_loop%=\n\t"              /* 74 2  byte 3 at 78 */
        "rjmp .Lrc_tail%=\n\t"
        ".Lrc_show%=:\n\t"                  /* once a SHOW: swap the buffers if a frame waits, outputs on */
        "cbi %[gpior], %[wrap]\n\t"
        "lds r7, %[swap]\n\t"
        "tst r7\n\t"
        "breq 4f\n\t"
        "lds r6, %[front]\n\t"
        "lds r7, %[front]+1\n\t"
        "lds r5, %[back]\n\t"
        "lds r8, %[back]+1\n\t"
        "sts %[front], r5\n\t"
        "sts %[front]+1, r8\n\t"
        "sts %[back], r6\n\t"
        "sts %[back]+1, r7\n\t"
        "lds r6, %[size]\n\t"               /* end = front + size */
        "add r6, r5\n\t"
        "brcc 5f\n\t"
        "inc r8\n\t"
        "5: sts %[end], r6\n\t"
        "sts %[end]+1, r8\n\t"
        "clr r6\n\t"
        "sts %[swap], r6\n\t"
        "4: clr r6\n\t"
        "sts %[show], r6\n\t"
        "inc r6\n\t"
        "sts %[outputs], r6\n\t"
        "sbi %[gpior], %[outbit]\n\t"
        "sbic %[gpior], %[small]\n\t"
        "sbi %[gpior], %[light]\n\t"
        "rjmp .Lrc_more%=\n\t"
        :
        : [port] "I"(_SFR_IO_ADDR(PORTB)), [oe] "I"(RC_PIN_OE), [latch] "I"(RC_PIN_LATCH),
          [gpior] "I"(_SFR_IO_ADDR(GPIOR0)), [wrap] "I"(RC_WRAP_BIT), [b2] "I"(RC_B2_BIT),
          [b3] "I"(RC_B3_BIT), [light] "I"(RC_LIGHT_BIT), [small] "I"(RC_SMALL_BIT),
          [outbit] "I"(RC_OUTPUTS_BIT), [spdr] "I"(_SFR_IO_ADDR(SPDR)), [tifr] "I"(_SFR_IO_ADDR(TIFR1)),
          [ocf] "I"(OCF1B), [gpior1] "I"(_SFR_IO_ADDR(GPIOR1)),
          [gpior2] "I"(_SFR_IO_ADDR(GPIOR2)), [timsk] "n"(_SFR_MEM_ADDR(TIMSK1)), [tcnt] "n"(_SFR_MEM_ADDR(TCNT1L)), [ocr] "n"(_SFR_MEM_ADDR(OCR1BL)),
          [blank] "i"(&rc_blank_cycles), [rest] "i"(&rc_slot_rest), [next] "i"(&rc_scan.next),
          [end] "i"(&rc_scan.end), [front] "i"(&rc_scan.front), [back] "i"(&rc_scan.back),
          [show] "i"(&rc_scan.show_req), [swap] "i"(&rc_scan.swap_req), [outputs] "i"(&rc_scan.outputs),
          [size] "i"(&rc_scan.size));
}
