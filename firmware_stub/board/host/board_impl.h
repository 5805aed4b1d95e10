/* Host board: every board call is recorded as an event so the unit tests (through ctypes) and the
 * fuzz target can check what the core asked the hardware to do, in order. */
#ifndef RC_BOARD_IMPL_H
#define RC_BOARD_IMPL_H
#include <stdint.h>

enum {
    HOST_EV_SPI = 1,        /* value: the byte */
    HOST_EV_LATCH,
    HOST_EV_BLANK,
    HOST_EV_UNBLANK,        /* output-enable went active after the blanking time */
    HOST_EV_OUTPUTS,        /* value: 0/1 */
    HOST_EV_TICK_START,     /* value: row_period_us (blanking: host_blanking_ns) */
    HOST_EV_TICK_STOP,
    HOST_EV_KICK,
    HOST_EV_SPI_ORDER       /* value: 1 bit 0 first, 0 bit 7 first */
};

void board_init(void);
int16_t board_serial_get(void);
void board_serial_put(uint8_t b);
void board_spi_put(uint8_t b);
void board_spi_put_slot(const uint8_t *src, uint8_t n);
void board_latch(void);
void board_blank(void);
void board_unblank_later(void);
void board_outputs(uint8_t on);
void board_tick_start(uint16_t row_period_us, uint32_t blanking_ns);
void board_spi_order(uint8_t lsb_first);
void board_tick_stop(void);
void board_watchdog_kick(void);
void board_wait_for_tick(void);
static inline void board_critical_enter(void) {}
static inline void board_critical_exit(void) {}

#endif
