/* Simulator-in-the-loop harness: the real receiver ELF in simavr, a chain of simavr's simulated
 * 74HC595-class registers on the SPI output, UART0 on a pseudo-terminal.
 *
 * Records go to stdout (or --records FILE), one per line, each prefixed "@rc " because simavr
 * prints lines of its own:
 *   @rc pty <slave path> <link or ->        the port to give the host
 *   @rc latch <cycle> <hex>                 every latch pulse: register contents, nearest the MCU first
 *   @rc spi <cycle> <bits>                  with --spi-bits: each byte as it left on MOSI, the first
 *                                           bit first ("10110000"), in the order SPCR's DORD gives
 *   @rc oe <cycle> <0|1>                    output-enable inactive/active (active low on PB2; a
 *                                           floating pin counts as inactive: pull-up)
 *   @rc reset <cycle>                       the AVR was reset (watchdog)
 *   @rc stall <cycle>                       the row tick interrupt was switched off (command "stall")
 *   @rc mark <cycle> <text>                 command "mark <text>": a host-side event on the cycle axis
 *   @rc isr <vector> <count> <min> <mean> <max> <total> <window>   command "stats"
 *   @rc busy <cycles> <window> <entries>    cycles inside either scan handler (nesting counted once)
 *                                           and how many times one was entered from outside both
 *   @rc spi-collisions <n>                  SPDR writes refused because a byte was still shifting (WCOL)
 *   @rc end <cycle>
 * Commands (one per line on stdin, with --commands): stall, mark TEXT, stats-reset, stats, quit,
 * and now (answers "@rc now <cycle>" on stdout whatever --records says).
 *
 * simavr 1.6's SPI model completes a byte 100 us after the SPDR write whatever the clock divider,
 * and ignores the data order; this harness replaces the SPDR write handler with one that honours
 * SPR1:0 and SPI2X (8 bits x divider cycles: 16 cycles at fosc/2) and DORD (1: the LSB is sent
 * first), as the ATmega328P datasheet describes, with the data sheet's SPIF/WCOL rules (see the SPI
 * section below). simavr's 74HC595 part takes a whole byte and puts its bit 7 on Q7 (the order of
 * an MSB-first shift), so with DORD set the byte is handed to it with its bits reversed. */
#define _GNU_SOURCE
#include <errno.h>
#include <fcntl.h>
#include <poll.h>
#include <pty.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <termios.h>
#include <time.h>
#include <unistd.h>

#include "sim_avr.h"
#include "sim_elf.h"
#include "sim_io.h"
#include "sim_irq.h"
#include "sim_cycle_timers.h"
#include "sim_interrupts.h"
#include "avr_ioport.h"
#include "avr_spi.h"
#include "avr_uart.h"
#include "hc595.h"

/* ATmega328P data-space addresses (datasheet register summary, from memory; the firmware's
 * disassembly uses the same I/O addresses). */
#define A_DDRB 0x24
#define A_PORTB 0x25
#define A_SPCR 0x4C
#define A_SPSR 0x4D
#define A_SPDR 0x4E
#define A_TIMSK1 0x6F
#define PIN_LATCH 1
#define PIN_OE 2
#define VEC_TIMER1_COMPA 11
#define VEC_TIMER1_COMPB 12
#define MAX_CHIPS 16             /* above the firmware's 10 bytes a row slot (core/config.h) */
#define POLL_CYCLES 1000

static avr_t *avr;
static hc595_t chips[MAX_CHIPS];
static int n_chips = 3;
static FILE *rec;
static int master_fd = -1, slave_fd = -1, commands;
static int xon = 1, oe_active, ddr_oe;
static volatile sig_atomic_t quit;
static uint8_t inbuf[512];
static size_t in_len, in_pos;
static avr_spi_t *spi;
static unsigned long spi_collisions;
static int realtime, spi_bits;
static struct timespec t0;
static uint64_t max_cycles;

/* ---- interrupt timing, for the benchmark ---- */
struct isr_stat {
    int vector;
    uint64_t enter, count, total, min, max;
    int running;
} stats[2] = {{VEC_TIMER1_COMPA, 0, 0, 0, UINT64_MAX, 0, 0}, {VEC_TIMER1_COMPB, 0, 0, 0, UINT64_MAX, 0, 0}};
static uint64_t stats_from, busy_total, busy_from, busy_entries;
static int busy_depth;                  /* scan handlers running, nested ones included */

static void isr_hook(struct avr_irq_t *irq, uint32_t value, void *param)
{
    struct isr_stat *s = param;
    (void)irq;
    if (value) {
        s->enter = avr->cycle;
        s->running = 1;
        if (busy_depth++ == 0) {
            busy_from = avr->cycle;
            busy_entries++;
        }
    } else if (s->running) {
        if (--busy_depth == 0)
            busy_total += avr->cycle - busy_from;
        uint64_t d = avr->cycle - s->enter;
        s->running = 0;
        s->count++;
        s->total += d;
        if (d < s->min) s->min = d;
        if (d > s->max) s->max = d;
    }
}

static void stats_reset(void)
{
    for (int i = 0; i < 2; i++) {
        stats[i].count = stats[i].total = stats[i].max = 0;
        stats[i].min = UINT64_MAX;
        stats[i].running = 0;
    }
    stats_from = avr->cycle;
    busy_total = 0;
    busy_entries = 0;
    busy_depth = 0;
}

static void stats_print(void)
{
    for (int i = 0; i < 2; i++) {
        struct isr_stat *s = &stats[i];
        fprintf(rec, "@rc isr %d %llu %llu %.2f %llu %llu %llu\n", s->vector, (unsigned long long)s->count,
                (unsigned long long)(s->count ? s->min : 0), s->count ? (double)s->total / (double)s->count : 0.0,
                (unsigned long long)s->max, (unsigned long long)s->total,
                (unsigned long long)(avr->cycle - stats_from));
    }
    fprintf(rec, "@rc busy %llu %llu %llu\n", (unsigned long long)busy_total, (unsigned long long)(avr->cycle - stats_from),
            (unsigned long long)busy_entries);
    fflush(rec);
}

/* ---- SPI at the configured clock, with the data sheet's flag rules ----
 * SPIF (bit 7) and WCOL (bit 6) clear only when SPSR was read with one of them set and SPDR is then
 * accessed; a write to SPDR while a byte is still shifting sets WCOL and is ignored. Firmware that
 * writes too early therefore loses bytes here as it would on the chip, and the tests see it. */
static int spi_busy, spif_seen;
static uint8_t spi_byte;
static avr_io_read_t spdr_read_orig;
static void *spdr_read_param;

static void spi_flags_access(struct avr_t *a)
{
    if (spif_seen) {
        a->data[A_SPSR] &= (uint8_t)~0xC0;
        spif_seen = 0;
    }
}

static uint8_t spsr_read(struct avr_t *a, avr_io_addr_t addr, void *param)
{
    (void)addr;
    (void)param;
    if (a->data[A_SPSR] & 0xC0)
        spif_seen = 1;
    return a->data[A_SPSR];
}

static uint8_t spdr_read(struct avr_t *a, avr_io_addr_t addr, void *param)
{
    spi_flags_access(a);
    (void)param;
    return spdr_read_orig ? spdr_read_orig(a, addr, spdr_read_param) : a->data[addr];
}

static avr_cycle_count_t spi_done(struct avr_t *a, avr_cycle_count_t when, void *param)
{
    (void)when;
    (void)param;
    spi_busy = 0;
    avr_raise_interrupt(a, &spi->spi);                      /* sets SPIF */
    avr_raise_irq(spi->io.irq + SPI_IRQ_OUTPUT, spi_byte);
    return 0;
}

static void spdr_write(struct avr_t *a, avr_io_addr_t addr, uint8_t v, void *param)
{
    (void)param;
    spi_flags_access(a);
    if (!(a->data[A_SPCR] & 0x40) || !(a->data[A_SPCR] & 0x10))
        return;                                             /* SPE and MSTR */
    if (spi_busy) {
        a->data[A_SPSR] |= 0x40;                            /* WCOL: the byte is not sent */
        spi_collisions++;
        return;
    }
    avr_core_watch_write(a, addr, v);
    static const int div[4] = {4, 16, 64, 128};
    int d = div[a->data[A_SPCR] & 3];
    if (a->data[A_SPSR] & 1)
        d /= 2;                                             /* SPI2X */
    int lsb_first = (a->data[A_SPCR] & 0x20) != 0;          /* DORD */
    if (spi_bits) {
        char bits[9];
        for (int i = 0; i < 8; i++)
            bits[i] = (char)('0' + ((v >> (lsb_first ? i : 7 - i)) & 1));
        bits[8] = 0;
        fprintf(rec, "@rc spi %llu %s\n", (unsigned long long)a->cycle, bits);
    }
    if (lsb_first) {
        uint8_t r = 0;
        for (int i = 0; i < 8; i++)
            r = (uint8_t)(r | (((v >> i) & 1) << (7 - i)));
        v = r;
    }
    spi_byte = v;
    spi_busy = 1;
    avr_cycle_timer_register(a, (avr_cycle_count_t)(8 * d), spi_done, NULL);
}

/* ---- latch and output-enable ---- */
static void record_oe(int active)
{
    if (active == oe_active)
        return;
    oe_active = active;
    fprintf(rec, "@rc oe %llu %d\n", (unsigned long long)avr->cycle, active);
}

static void latch_hook(struct avr_irq_t *irq, uint32_t value, void *param)
{
    (void)param;
    if (!(irq->value && !value))
        return;                                             /* the simulated part latches on the falling edge */
    fprintf(rec, "@rc latch %llu ", (unsigned long long)avr->cycle);
    for (int i = 0; i < n_chips; i++)
        fprintf(rec, "%02x", chips[i].value & 0xFF);        /* the part is 32 bits wide: one chip is 8 */
    fputc('\n', rec);
}

static void oe_pin_hook(struct avr_irq_t *irq, uint32_t value, void *param)
{
    (void)irq;
    (void)param;
    record_oe(ddr_oe && !value);
}

static void ddr_hook(struct avr_irq_t *irq, uint32_t value, void *param)
{
    (void)irq;
    (void)param;
    ddr_oe = (value >> PIN_OE) & 1;
    record_oe(ddr_oe && !((avr->data[A_PORTB] >> PIN_OE) & 1));
}

/* ---- UART0 <-> pseudo-terminal ---- */
static avr_irq_t *uart_in;

static void uart_out_hook(struct avr_irq_t *irq, uint32_t value, void *param)
{
    (void)irq;
    (void)param;
    uint8_t b = (uint8_t)value;
    if (write(master_fd, &b, 1) < 0 && errno != EAGAIN)
        perror("harness: pty write");
}

static void xon_hook(struct avr_irq_t *irq, uint32_t value, void *param) { (void)irq; (void)value; (void)param; xon = 1; }
static void xoff_hook(struct avr_irq_t *irq, uint32_t value, void *param) { (void)irq; (void)value; (void)param; xon = 0; }

static void command(char *line)
{
    line[strcspn(line, "\r\n")] = 0;
    if (!strcmp(line, "stall")) {
        avr->data[A_TIMSK1] &= (uint8_t)~0x02;             /* OCIE1A: the row tick stops */
        fprintf(rec, "@rc stall %llu\n", (unsigned long long)avr->cycle);
    } else if (!strncmp(line, "mark ", 5)) {
        fprintf(rec, "@rc mark %llu %s\n", (unsigned long long)avr->cycle, line + 5);
    } else if (!strcmp(line, "stats-reset")) {
        stats_reset();
    } else if (!strcmp(line, "stats")) {
        stats_print();
    } else if (!strcmp(line, "now")) {
        printf("@rc now %llu\n", (unsigned long long)avr->cycle);   /* on stdout: for the caller to wait on */
        fflush(stdout);
    } else if (!strcmp(line, "quit")) {
        quit = 1;
    }
    fflush(rec);
}

static void poll_commands(void)
{
    static char buf[256];
    static size_t len;
    struct pollfd p = {0, POLLIN, 0};
    while (poll(&p, 1, 0) > 0) {
        if (!(p.revents & (POLLIN | POLLHUP)))
            return;
        ssize_t n = read(0, buf + len, sizeof buf - 1 - len);
        if (n <= 0) {
            quit = 1;
            return;
        }
        len += (size_t)n;
        buf[len] = 0;
        char *nl;
        while ((nl = memchr(buf, '\n', len))) {
            *nl = 0;
            command(buf);
            size_t used = (size_t)(nl - buf) + 1;
            memmove(buf, nl + 1, len - used);
            len -= used;
        }
        if (len == sizeof buf - 1)
            len = 0;
    }
}

static void pace(void)
{
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    double wall = (double)(now.tv_sec - t0.tv_sec) + (double)(now.tv_nsec - t0.tv_nsec) * 1e-9;
    double sim = (double)avr->cycle / (double)avr->frequency;
    if (sim > wall + 0.002)
        usleep((useconds_t)((sim - wall) * 1e6));
}

static avr_cycle_count_t poll_timer(struct avr_t *a, avr_cycle_count_t when, void *param)
{
    (void)param;
    if (commands)
        poll_commands();
    while (xon) {
        if (in_pos == in_len) {
            ssize_t n = read(master_fd, inbuf, sizeof inbuf);
            if (n <= 0)
                break;
            in_len = (size_t)n;
            in_pos = 0;
        }
        avr_raise_irq(uart_in, inbuf[in_pos++]);
    }
    if (realtime)
        pace();
    if (max_cycles && a->cycle >= max_cycles)
        quit = 1;
    return when + POLL_CYCLES;
}

/* An I/O block of our own whose reset hook sees every AVR reset after start-up. */
static void on_reset(struct avr_io_t *io)
{
    (void)io;
    fprintf(rec, "@rc reset %llu\n", (unsigned long long)avr->cycle);
    ddr_oe = 0;
    record_oe(0);                                           /* every pin floats after a reset */
    avr_cycle_timer_register(avr, POLL_CYCLES, poll_timer, NULL);
}
static avr_io_t reset_io = {.kind = "rowcast-reset", .reset = on_reset};

static void on_signal(int sig) { (void)sig; quit = 1; }

static void usage(void)
{
    fprintf(stderr, "usage: rowcast-harness FIRMWARE.elf [--registers N] [--pty-link PATH] [--records FILE]\n"
                    "       [--max-cycles N] [--realtime] [--commands] [--spi-bits]\n");
    exit(2);
}

int main(int argc, char **argv)
{
    const char *elf = NULL, *link = NULL, *records = NULL;
    for (int i = 1; i < argc; i++) {
        if (!strcmp(argv[i], "--registers") && i + 1 < argc) n_chips = atoi(argv[++i]);
        else if (!strcmp(argv[i], "--pty-link") && i + 1 < argc) link = argv[++i];
        else if (!strcmp(argv[i], "--records") && i + 1 < argc) records = argv[++i];
        else if (!strcmp(argv[i], "--max-cycles") && i + 1 < argc) max_cycles = strtoull(argv[++i], NULL, 10);
        else if (!strcmp(argv[i], "--realtime")) realtime = 1;
        else if (!strcmp(argv[i], "--commands")) commands = 1;
        else if (!strcmp(argv[i], "--spi-bits")) spi_bits = 1;
        else if (argv[i][0] != '-' && !elf) elf = argv[i];
        else usage();
    }
    if (!elf || n_chips < 1 || n_chips > MAX_CHIPS)
        usage();
    rec = records ? fopen(records, "w") : stdout;
    if (!rec) {
        perror(records);
        return 2;
    }
    setvbuf(rec, NULL, _IOFBF, 1 << 20);

    elf_firmware_t fw;
    memset(&fw, 0, sizeof fw);
    if (elf_read_firmware(elf, &fw) != 0) {
        fprintf(stderr, "harness: cannot read %s\n", elf);
        return 2;
    }
    avr = avr_make_mcu_by_name("atmega328p");
    if (!avr) {
        fprintf(stderr, "harness: simavr has no atmega328p core\n");
        return 2;
    }
    avr_init(avr);
    avr->frequency = 16000000;
    avr_load_firmware(avr, &fw);
    avr->frequency = 16000000;

    /* SPI: our own SPDR write handler (see the top of this file). */
    spi = (avr_spi_t *)avr->io[AVR_DATA_TO_IO(A_SPDR)].w.param;
    avr->io[AVR_DATA_TO_IO(A_SPDR)].w.c = spdr_write;
    spdr_read_orig = avr->io[AVR_DATA_TO_IO(A_SPDR)].r.c;
    spdr_read_param = avr->io[AVR_DATA_TO_IO(A_SPDR)].r.param;
    avr->io[AVR_DATA_TO_IO(A_SPDR)].r.c = spdr_read;
    if (avr->io[AVR_DATA_TO_IO(A_SPSR)].r.c) {
        fprintf(stderr, "harness: simavr already reads SPSR through a handler; this harness expects none\n");
        return 2;
    }
    avr->io[AVR_DATA_TO_IO(A_SPSR)].r.c = spsr_read;

    /* The chain: SPI -> U1 -> U2 -> ...; the first byte shifted ends in the farthest chip. */
    for (int i = 0; i < n_chips; i++)
        hc595_init(avr, &chips[i]);
    avr_connect_irq(avr_io_getirq(avr, AVR_IOCTL_SPI_GETIRQ(0), SPI_IRQ_OUTPUT),
                    chips[0].irq + IRQ_HC595_SPI_BYTE_IN);
    for (int i = 1; i < n_chips; i++)
        avr_connect_irq(chips[i - 1].irq + IRQ_HC595_SPI_BYTE_OUT, chips[i].irq + IRQ_HC595_SPI_BYTE_IN);
    avr_irq_t *latch = avr_io_getirq(avr, AVR_IOCTL_IOPORT_GETIRQ('B'), PIN_LATCH);
    for (int i = 0; i < n_chips; i++)
        avr_connect_irq(latch, chips[i].irq + IRQ_HC595_IN_LATCH);
    avr_irq_register_notify(latch, latch_hook, NULL);
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_IOPORT_GETIRQ('B'), PIN_OE), oe_pin_hook, NULL);
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_IOPORT_GETIRQ('B'), IOPORT_IRQ_DIRECTION_ALL),
                            ddr_hook, NULL);

    /* Interrupt timing of the row tick and the end-of-blanking handler. */
    for (int v = 0; v < avr->interrupts.vector_count; v++) {
        avr_int_vector_t *vec = avr->interrupts.vector[v];
        for (int s = 0; s < 2; s++)
            if (vec && vec->vector == stats[s].vector)
                avr_irq_register_notify(vec->irq + AVR_INT_IRQ_RUNNING, isr_hook, &stats[s]);
    }

    /* UART0 on a pseudo-terminal of our own (raw, slave kept open so a host may close and reopen). */
    char slave[128];
    if (openpty(&master_fd, &slave_fd, slave, NULL, NULL) < 0) {
        perror("harness: openpty");
        return 3;
    }
    struct termios tio;
    tcgetattr(slave_fd, &tio);
    cfmakeraw(&tio);
    tcsetattr(slave_fd, TCSANOW, &tio);
    fcntl(master_fd, F_SETFL, fcntl(master_fd, F_GETFL) | O_NONBLOCK);
    uart_in = avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_INPUT);
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_OUTPUT), uart_out_hook, NULL);
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_OUT_XON), xon_hook, NULL);
    avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_OUT_XOFF), xoff_hook, NULL);
    /* Let simavr's UART stay quiet on stdout. */
    uint32_t flags = 0;
    avr_ioctl(avr, AVR_IOCTL_UART_GET_FLAGS('0'), &flags);
    flags &= ~(uint32_t)(AVR_UART_FLAG_STDIO | AVR_UART_FLAG_POLL_SLEEP);
    avr_ioctl(avr, AVR_IOCTL_UART_SET_FLAGS('0'), &flags);

    if (link) {
        unlink(link);
        if (symlink(slave, link) < 0) {
            perror(link);
            return 3;
        }
    }
    avr_register_io(avr, &reset_io);
    avr_cycle_timer_register(avr, POLL_CYCLES, poll_timer, NULL);
    signal(SIGINT, on_signal);
    signal(SIGTERM, on_signal);
    clock_gettime(CLOCK_MONOTONIC, &t0);

    fprintf(rec, "@rc pty %s %s\n", slave, link ? link : "-");
    fprintf(rec, "@rc oe 0 0\n");
    fflush(rec);
    if (rec != stdout) {
        printf("@rc pty %s %s\n", slave, link ? link : "-");
        fflush(stdout);
    }

    int state = cpu_Running;
    while (!quit && state != cpu_Done && state != cpu_Crashed)
        state = avr_run(avr);
    fprintf(rec, "@rc spi-collisions %lu\n", spi_collisions);
    fprintf(rec, "@rc end %llu %d\n", (unsigned long long)avr->cycle, state);
    fflush(rec);
    if (link)
        unlink(link);
    /* Leave without simavr's teardown (its pty part can hang there; ours has nothing to stop). */
    _exit(0);
}
