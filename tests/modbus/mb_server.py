# mb_server.py: independent Modbus server (Debian's python3-pymodbus 3.0) serving tests/modbus/values.txt.
"""Serves the known values of values.txt over Modbus TCP (127.0.0.1) or RTU (a serial device).

TCP: prints "PORT <n>" once listening (--port 0 = a free port chosen by the kernel).
RTU: prints "READY" once the serial device is open.
Exit code 77 (skip) when pymodbus or pyserial is missing.

Test hooks, both from the datastore itself, not from the client under test:
  - holding registers exist at 0..999 only: a read at 5000 gets exception 02 (illegal data
    address; Modbus Application Protocol Specification V1.1b3, 7);
  - the first read that covers holding register --slow-address answers --slow-seconds late.
"""
import argparse
import asyncio
import logging
import math
import struct
import sys
import time

try:
    from pymodbus.constants import Endian
    from pymodbus.datastore import (ModbusSequentialDataBlock, ModbusServerContext,
                                    ModbusSlaveContext)
    from pymodbus.payload import BinaryPayloadBuilder
    from pymodbus.server.async_io import ModbusSerialServer, ModbusTcpServer
    from pymodbus.transaction import ModbusRtuFramer, ModbusSocketFramer
except ImportError as exc:  # the test is skipped, not failed, on a machine without it
    print(f"mb_server.py: pymodbus not available: {exc}", file=sys.stderr)
    sys.exit(77)

REGS = 1000   # holding and input registers 0..999
BITS = 2000   # coils and discrete inputs 0..1999

# Byte order inside a word, word order: pymodbus's own names for the four layouts.
ORDERS = {
    "abcd": (Endian.Big, Endian.Big),
    "badc": (Endian.Little, Endian.Big),
    "cdab": (Endian.Big, Endian.Little),
    "dcba": (Endian.Little, Endian.Little),
    "-": (Endian.Big, Endian.Big),
}


def encode(typ, order, text):
    """Registers of one value, built by pymodbus's BinaryPayloadBuilder."""
    byteorder, wordorder = ORDERS[order]
    b = BinaryPayloadBuilder(byteorder=byteorder, wordorder=wordorder)
    if typ == "u16":
        b.add_16bit_uint(int(text))
    elif typ == "s16":
        b.add_16bit_int(int(text))
    elif typ == "u32":
        b.add_32bit_uint(int(text))
    elif typ == "s32":
        b.add_32bit_int(int(text))
    elif typ == "f32":
        b.add_32bit_float(float(text))
    elif typ == "u64":
        b.add_64bit_uint(int(text))
    else:
        raise ValueError(f"unknown type {typ}")
    regs = b.to_registers()
    if order == "abcd" and typ == "f32" and not math.isnan(float(text)):
        # Cross-check pymodbus against the struct module: big-endian IEEE 754 binary32.
        want = list(struct.unpack(">HH", struct.pack(">f", float(text))))
        assert regs == want, (text, regs, want)
    return regs


class SlowBlock(ModbusSequentialDataBlock):
    """Holding registers whose first read covering one address answers late (blocks the loop)."""

    def __init__(self, address, values, slow_address, slow_seconds):
        super().__init__(address, values)
        self.slow_address = slow_address
        self.slow_seconds = slow_seconds

    def getValues(self, address, count=1):
        if self.slow_address is not None and address <= self.slow_address < address + count:
            self.slow_address = None
            time.sleep(self.slow_seconds)
        return super().getValues(address, count)


def load(path, slow_address, slow_seconds):
    hr, ir = [0] * REGS, [0] * REGS
    co, di = [False] * BITS, [False] * BITS
    with open(path, encoding="utf-8") as f:
        for lineno, line in enumerate(f, 1):
            line = line.split("#", 1)[0].split()
            if not line:
                continue
            table, addr, typ, order, text = line
            addr = int(addr)
            if table in ("coil", "discrete"):
                (co if table == "coil" else di)[addr] = text == "1"
                continue
            regs = encode(typ, order, text)
            store = hr if table == "holding" else ir
            store[addr:addr + len(regs)] = regs
    # zero_mode=True: protocol address n is datastore index n (without it pymodbus 3.0 shifts by one).
    slave = ModbusSlaveContext(
        hr=SlowBlock(0, hr, slow_address, slow_seconds),
        ir=ModbusSequentialDataBlock(0, ir),
        co=ModbusSequentialDataBlock(0, co),
        di=ModbusSequentialDataBlock(0, di),
        zero_mode=True)
    return ModbusServerContext(slaves=slave, single=True)


async def run_tcp(context, port):
    server = ModbusTcpServer(context, framer=ModbusSocketFramer, address=("127.0.0.1", port),
                             allow_reuse_address=True)
    task = asyncio.create_task(server.serve_forever())
    await server.serving
    print(f"PORT {server.server.sockets[0].getsockname()[1]}", flush=True)
    await task


async def run_rtu(context, device, baud, parity, stopbits):
    try:
        import serial  # noqa: F401  (pyserial: pymodbus's serial transport)
    except ImportError as exc:
        print(f"mb_server.py: pyserial not available: {exc}", file=sys.stderr)
        sys.exit(77)
    server = ModbusSerialServer(context, framer=ModbusRtuFramer, port=device, baudrate=baud,
                                bytesize=8, parity=parity, stopbits=stopbits, timeout=0.05)
    await server.start()
    if server.transport is None:
        print(f"mb_server.py: cannot open {device}", file=sys.stderr)
        sys.exit(1)
    print("READY", flush=True)
    await server.serve_forever()


def main():
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--values", required=True)
    ap.add_argument("--port", type=int, default=0)
    ap.add_argument("--rtu", metavar="DEVICE")
    ap.add_argument("--baud", type=int, default=19200)
    ap.add_argument("--parity", choices=("N", "E", "O"), default="N")
    ap.add_argument("--stopbits", type=int, choices=(1, 2), default=2)
    ap.add_argument("--slow-address", type=int)
    ap.add_argument("--slow-seconds", type=float, default=1.5)
    args = ap.parse_args()
    # Disconnects and the exception answers the test asks for are logged as errors by pymodbus.
    logging.getLogger("pymodbus").setLevel(logging.CRITICAL)
    context = load(args.values, args.slow_address, args.slow_seconds)
    if args.rtu:
        asyncio.run(run_rtu(context, args.rtu, args.baud, args.parity, args.stopbits))
    else:
        asyncio.run(run_tcp(context, args.port))


if __name__ == "__main__":
    main()
