/* Start-up of the C loggers on QEMU's Cortex-M boards (microbit: Cortex-M0;
 * mps2-an386: Cortex-M4F): vector table, reset handler (copies .data, zeroes
 * .bss, opens newlib's semihosting file handles, reads the command line that
 * QEMU's -semihosting-config arg=... gives), then main(argc, argv) and exit
 * (newlib's rdimon: semihosting SYS_EXIT, QEMU's exit status). */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

extern uint32_t __data_load__, __data_start__, __data_end__, __bss_start__, __bss_end__;
extern uint32_t __stack_top__, end;
extern void *_sbrk(int incr);
extern void initialise_monitor_handles(void);
extern int main(int argc, char **argv);

/* ARM semihosting call (bkpt 0xAB on M-profile). */
static int semihost(int op, void *arg) {
    register int r0 __asm__("r0") = op;
    register void *r1 __asm__("r1") = arg;
    __asm__ volatile("bkpt 0xAB" : "+r"(r0) : "r"(r1) : "memory");
    return r0;
}

#define SYS_GET_CMDLINE 0x15
#define SYS_EXIT 0x18
#define MAX_ARGS 8

static char cmdline[256];
static char *argv[MAX_ARGS + 1];

/* Splits the semihosting command line at spaces (paths without spaces). */
static int args(void) {
    struct { char *buf; int len; } block = {cmdline, (int)sizeof cmdline - 1};
    if (semihost(SYS_GET_CMDLINE, &block) != 0) return 0;
    cmdline[block.len] = 0;
    int argc = 0;
    char *p = cmdline;
    while (*p && argc < MAX_ARGS) {
        while (*p == ' ') *p++ = 0;
        if (!*p) break;
        argv[argc++] = p;
        while (*p && *p != ' ') p++;
    }
    argv[argc] = 0;
    return argc;
}

#define PAINT 0x5AC3A53Cu

/* At exit: the RAM the run took (statics, newlib's heap, and the stack's
 * high-water mark, found as the lowest word no longer holding the paint). */
static void report_memory(void) {
    uint32_t *heap_top = (uint32_t *)_sbrk(0), *p = heap_top;
    while (p < &__stack_top__ && *p == PAINT) p++;
    printf("board: RAM: statics %u B, heap %u B, stack %u B at most\n",
           (unsigned)((char *)&end - (char *)&__data_start__),
           (unsigned)((char *)heap_top - (char *)&end),
           (unsigned)((char *)&__stack_top__ - (char *)p));
}

void Reset_Handler(void) {
#if defined(__ARM_FP)
    /* Cortex-M4F: full access to the FPU (CP10, CP11 in CPACR) before any
     * floating-point instruction. */
    *(volatile uint32_t *)0xE000ED88 |= 0xFu << 20;
    __asm__ volatile("dsb\n isb" ::: "memory");
#endif
    uint32_t *src = &__data_load__, *dst = &__data_start__;
    while (dst < &__data_end__) *dst++ = *src++;
    for (dst = &__bss_start__; dst < &__bss_end__;) *dst++ = 0;
    /* Paint the free RAM (heap and stack) up to just below this frame. */
    uint32_t *sp;
    __asm__ volatile("mov %0, sp" : "=r"(sp));
    for (dst = &end; dst < sp - 16;) *dst++ = PAINT;
    initialise_monitor_handles();
    atexit(report_memory);
    int argc = args();
    exit(main(argc, argv));
}

/* A fault ends the run with a failure status (ADS_Stopped_RunTimeErrorUnknown). */
void Fault_Handler(void) {
    semihost(SYS_EXIT, (void *)0x20023);
    for (;;) {}
}

__attribute__((section(".vectors"), used)) static void *const vectors[16] = {
    &__stack_top__, Reset_Handler, Fault_Handler, Fault_Handler, Fault_Handler, Fault_Handler,
    Fault_Handler,  0,             0,             0,             0,             Fault_Handler,
    Fault_Handler,  0,             Fault_Handler, Fault_Handler,
};
