#!/bin/sh
# Print the flash and RAM the shaper costs on the Cortex-M3, from arm-none-eabi-size and -nm.
#
#   footprint.sh CROSS FOOTPRINT_O TASK_O FW_ELF
#
# FOOTPRINT_O is the runtime and the emitted tables partially linked with --gc-sections from the
# entry points the task uses, so it holds exactly the code and const tables a drive build links.
# TASK_O is the example's glue (common/travel_task.c). FW_ELF is the whole test image; its
# fw_task symbol is the caller-owned RAM (instance struct + accumulator ring).
set -eu
CROSS="$1"; FOOT="$2"; TASK="$3"; ELF="$4"

echo "== arm-none-eabi-size: runtime + tables (linked part only), task glue, whole test image"
"${CROSS}size" "$FOOT" "$TASK" "$ELF"

# Berkeley format: text data bss dec hex filename
set -- $("${CROSS}size" "$FOOT" | tail -n 1)
foot_flash=$(( $1 + $2 )); foot_ram=$(( $2 + $3 ))
set -- $("${CROSS}size" "$TASK" | tail -n 1)
task_flash=$(( $1 + $2 ))
set -- $("${CROSS}size" "$ELF" | tail -n 1)
elf_flash=$(( $1 + $2 )); elf_ram=$(( $2 + $3 ))
# nm -S lines: address size type name; sizes are hex
tables=$("${CROSS}nm" -S "$FOOT" | {
    s=0
    while read -r _addr size type _name; do
        case "$type" in r|R) s=$(( s + 0x$size ));; esac
    done
    echo "$s"
})
buffers=$("${CROSS}nm" -S "$ELF" | {
    while read -r _addr size _type name; do
        [ "$name" = "fw_task" ] && echo $(( 0x$size ))
    done
    true
})

echo "== footprint (bytes)"
echo "runtime + tables flash: $foot_flash (code $((foot_flash - tables)), const tables $tables)"
echo "runtime + tables static RAM: $foot_ram"
echo "caller-owned RAM (instance struct + accumulator ring, fw_task): ${buffers:-?}"
echo "task glue flash (travel_task.o): $task_flash"
echo "whole test image: flash $elf_flash, static RAM $elf_ram (includes the compiled-in recording, reporting and start-up)"
