/* Build-time capacity and limits of the receiver (PROTOCOL.md section 6).
 * Every value can be overridden with -D on the compiler command line. */
#ifndef RC_CONFIG_H
#define RC_CONFIG_H

#define RC_PROTOCOL_VERSION 2u

#ifndef RC_MAX_ROWS
#define RC_MAX_ROWS 16u            /* PROTOCOL.md section 6: ATmega328P-class build */
#endif
/* 10 bytes a row slot: two row registers and eight column registers, the bundled 32 x 16 tiled sign
 * (patterns/profiles/tiled-32x16.toml). The two frame buffers and the message buffer then take 487 of
 * the 604 bytes of static RAM (avr-size), leaving about 1.4 KB of the 2 KB for the stack (ATmega328P
 * datasheet: 2 KB SRAM, from memory). */
#ifndef RC_MAX_BYTES_PER_ROW
#define RC_MAX_BYTES_PER_ROW 10u
#endif

/* Shortest row period the scan interrupt is given: at 16 MHz the row interrupt takes about 33 + 17 cycles
 * a byte of the slot (84.5 for 3 bytes, 202.3 for 10; tests/bench/bench_firmware.py), so 20 us (320 cycles)
 * still leaves the main loop time to decode the serial stream for short chains. Long chains need longer
 * rows: rowcast check names the shortest row that keeps the scan within 30 % of the core. */
#ifndef RC_MIN_ROW_PERIOD_US
#define RC_MIN_ROW_PERIOD_US 20u
#endif
/* Longest row period: the watchdog is kicked once per row and times out after 16 ms (ATmega328P
 * datasheet, watchdog prescaler table, from memory), so a row must be far shorter than that. */
#ifndef RC_MAX_ROW_PERIOD_US
#define RC_MAX_ROW_PERIOD_US 4000u
#endif

/* Light each row must keep after its blanking: the end of blanking is counted from the moment the
 * row tick runs, which another interrupt may delay by a few microseconds; a blanking that reaches
 * past the row period would leave the row dark, so CONFIGURE refuses it (PROTOCOL.md section 3). */
#ifndef RC_MIN_LIGHT_NS
#define RC_MIN_LIGHT_NS 10000u
#endif
/* Answers kept for repeats (PROTOCOL.md section 5): the host keeps at most this many messages
 * unanswered at once. */
#define RC_ANSWERS 4u

#if RC_MAX_ROWS * RC_MAX_BYTES_PER_ROW > 255
#error "a frame must fit a byte count (rows x bytes_per_row <= 255)"
#endif

#define RC_FRAME_SLOTS 2u          /* front and back buffer */
#define RC_HEADER_LEN 4u
#define RC_CRC_LEN 2u
#define RC_FRAME_BYTES (RC_MAX_ROWS * RC_MAX_BYTES_PER_ROW)
/* Longest payload (FRAME: header + flags + slot bytes) plus its CRC. */
#define RC_MSG_MAX (RC_HEADER_LEN + 1u + RC_FRAME_BYTES + RC_CRC_LEN)

#endif
