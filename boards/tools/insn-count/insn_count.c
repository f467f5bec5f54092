/*
 * insn_count: a tiny QEMU TCG plugin that counts the guest instructions executed inside
 * marked regions of a firmware.
 *
 * The firmware brackets each measured region with calls to two `#[inline(never)]` marker
 * functions, `bench_start` and `bench_stop` (boards/common). A region starts at the first
 * instruction of `bench_start` and ends at the first instruction of `bench_stop`, so every
 * region includes the same few instructions of marker overhead; the firmware measures an
 * empty region first so that overhead can be read off.
 *
 *   qemu-system-arm ... -plugin ./libinsn_count.so,start=0x...,stop=0x... -d plugin -D log.txt
 *
 * Each finished region appends "insn_region <index>: <count>" to QEMU's log, and at exit
 * "insn_total: <count>". Counts are of executed guest instructions, not cycles.
 *
 * Debian's QEMU 7.2 is built with plugin support but ships neither plugins nor
 * qemu-plugin.h, so the few functions of the public plugin API (version 1, as in QEMU 7.2)
 * that this file uses are declared here. Their signatures are those of QEMU 7.2's
 * include/qemu/qemu-plugin.h; a QEMU whose plugin API version is not 1 refuses to load us
 * rather than misbehave.
 */
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- the subset of the QEMU 7.2 plugin API used below ---- */
typedef uint64_t qemu_plugin_id_t;
typedef struct {
    const char *target_name;
    struct { int min, cur; } version;
    bool system_emulation;
    union { struct { int smp_vcpus, max_vcpus; } system; };
} qemu_info_t;
struct qemu_plugin_tb;
struct qemu_plugin_insn;
enum qemu_plugin_cb_flags { QEMU_PLUGIN_CB_NO_REGS, QEMU_PLUGIN_CB_R_REGS, QEMU_PLUGIN_CB_RW_REGS };
enum qemu_plugin_op { QEMU_PLUGIN_INLINE_ADD_U64 };
typedef void (*qemu_plugin_vcpu_udata_cb_t)(unsigned int vcpu_index, void *userdata);
typedef void (*qemu_plugin_udata_cb_t)(qemu_plugin_id_t id, void *userdata);
typedef void (*qemu_plugin_vcpu_tb_trans_cb_t)(qemu_plugin_id_t id, struct qemu_plugin_tb *tb);
void qemu_plugin_register_vcpu_tb_trans_cb(qemu_plugin_id_t id, qemu_plugin_vcpu_tb_trans_cb_t cb);
void qemu_plugin_register_vcpu_insn_exec_cb(struct qemu_plugin_insn *insn,
                                            qemu_plugin_vcpu_udata_cb_t cb,
                                            enum qemu_plugin_cb_flags flags, void *userdata);
void qemu_plugin_register_vcpu_insn_exec_inline(struct qemu_plugin_insn *insn,
                                                enum qemu_plugin_op op, void *ptr, uint64_t imm);
size_t qemu_plugin_tb_n_insns(const struct qemu_plugin_tb *tb);
struct qemu_plugin_insn *qemu_plugin_tb_get_insn(const struct qemu_plugin_tb *tb, size_t idx);
uint64_t qemu_plugin_insn_vaddr(const struct qemu_plugin_insn *insn);
void qemu_plugin_outs(const char *string);
void qemu_plugin_register_atexit_cb(qemu_plugin_id_t id, qemu_plugin_udata_cb_t cb, void *userdata);
/* ---- end of the API subset ---- */

__attribute__((visibility("default"))) int qemu_plugin_version = 1;

/* The boards are single-core, so one set of counters is enough. */
static uint64_t executed;           /* every guest instruction since reset */
static uint64_t region_begin;       /* `executed` when the open region started */
static uint64_t regions;            /* finished regions */
static bool in_region;
static uint64_t start_pc = UINT64_MAX, stop_pc = UINT64_MAX;

static void region_start(unsigned int vcpu, void *udata)
{
    (void)vcpu;
    (void)udata;
    region_begin = executed;
    in_region = true;
}

static void region_stop(unsigned int vcpu, void *udata)
{
    (void)vcpu;
    (void)udata;
    if (!in_region) {
        return; /* a stop without a start: ignore rather than print garbage */
    }
    char line[80];
    snprintf(line, sizeof line, "insn_region %llu: %llu\n", (unsigned long long)regions,
             (unsigned long long)(executed - region_begin));
    qemu_plugin_outs(line);
    regions++;
    in_region = false;
}

static void on_translate(qemu_plugin_id_t id, struct qemu_plugin_tb *tb)
{
    (void)id;
    size_t n = qemu_plugin_tb_n_insns(tb);
    for (size_t i = 0; i < n; i++) {
        struct qemu_plugin_insn *insn = qemu_plugin_tb_get_insn(tb, i);
        uint64_t pc = qemu_plugin_insn_vaddr(insn);
        /* Registered before the counting op, so both markers see `executed` at the same
         * point relative to their own instruction. */
        if (pc == start_pc) {
            qemu_plugin_register_vcpu_insn_exec_cb(insn, region_start, QEMU_PLUGIN_CB_NO_REGS, NULL);
        }
        if (pc == stop_pc) {
            qemu_plugin_register_vcpu_insn_exec_cb(insn, region_stop, QEMU_PLUGIN_CB_NO_REGS, NULL);
        }
        qemu_plugin_register_vcpu_insn_exec_inline(insn, QEMU_PLUGIN_INLINE_ADD_U64, &executed, 1);
    }
}

static void at_guest_exit(qemu_plugin_id_t id, void *udata)
{
    (void)id;
    (void)udata;
    char line[80];
    snprintf(line, sizeof line, "insn_total: %llu\n", (unsigned long long)executed);
    qemu_plugin_outs(line);
}

static int parse_addr(const char *text, uint64_t *out)
{
    char *end;
    unsigned long long v = strtoull(text, &end, 0);
    if (end == text || *end != '\0') {
        return -1;
    }
    *out = (uint64_t)v & ~(uint64_t)1; /* drop the Thumb bit that symbol values carry */
    return 0;
}

__attribute__((visibility("default"))) int qemu_plugin_install(qemu_plugin_id_t id,
                                                               const qemu_info_t *info,
                                                               int argc, char **argv)
{
    (void)info;
    for (int i = 0; i < argc; i++) {
        int bad;
        if (!strncmp(argv[i], "start=", 6)) {
            bad = parse_addr(argv[i] + 6, &start_pc);
        } else if (!strncmp(argv[i], "stop=", 5)) {
            bad = parse_addr(argv[i] + 5, &stop_pc);
        } else {
            bad = 1;
        }
        if (bad) {
            fprintf(stderr, "insn_count: bad argument '%s' (want start=ADDR,stop=ADDR)\n", argv[i]);
            return -1;
        }
    }
    if (start_pc == UINT64_MAX || stop_pc == UINT64_MAX) {
        fprintf(stderr, "insn_count: both start= and stop= are required\n");
        return -1;
    }
    qemu_plugin_register_vcpu_tb_trans_cb(id, on_translate);
    qemu_plugin_register_atexit_cb(id, at_guest_exit, NULL);
    return 0;
}
