/* The tiny board interface the portable core is written against.
 *
 * A board layer provides "board_impl.h" (found through the include path) defining these, usually
 * as static inline functions so the row interrupt stays short. The tick steps (blank, latch,
 * unblank_later, spi_put_slot, watchdog_kick) are what core/scan.h calls; a board may instead run the
 * same steps in a row interrupt of its own (the ATmega328P board: board/avr328p/row_tick.c):
 *
 *   void board_init(void);               pins safe: output-enable inactive, latch idle low
 *   int16_t board_serial_get(void);      next received byte, or -1 when none is waiting
 *   void board_serial_put(uint8_t b);    queue one byte for sending (may wait for room)
 *   void board_spi_order(uint8_t lsb_first);
 *                                        bit order of every following byte on the serial data line:
 *                                        0 bit 7 first, 1 bit 0 first (the profile's chain.bit_order)
 *   void board_spi_put(uint8_t b);       shift one byte into the register chain, return when done
 *   void board_spi_put_slot(const uint8_t *src, uint8_t n);
 *                                        shift n >= 1 bytes in order; the last one may still be
 *                                        shifting on return (it is done long before the next latch)
 *   void board_latch(void);              pulse the storage-register clock (high, then low)
 *   void board_blank(void);              output-enable inactive now (start of a row)
 *   void board_unblank_later(void);      output-enable goes active once the blanking time has
 *                                        passed since board_blank, if outputs are switched on (at
 *                                        once when it has already passed: a blanking of 0 lights)
 *   void board_outputs(uint8_t on);      switch the outputs on (from the next row) or off (now)
 *   void board_tick_start(uint16_t row_period_us, uint32_t blanking_ns);
 *                                        call rc_scan_tick() once per row period from now on; the
 *                                        core has checked blanking_ns + RC_MIN_LIGHT_NS <= the period
 *   void board_tick_stop(void);
 *   void board_watchdog_kick(void);      the scan is alive
 *   void board_wait_for_tick(void);      the main loop waits for the row tick to run
 *   void board_critical_enter(void);     keep the row tick out (shared state update)
 *   void board_critical_exit(void);
 */
#ifndef RC_BOARD_H
#define RC_BOARD_H
#include <stdint.h>
#include "board_impl.h"
#endif
