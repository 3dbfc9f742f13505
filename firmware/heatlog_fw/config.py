"""Board configuration: a JSON file on the board, validated at boot and on every write.

`validate(cfg)` returns a list of every problem (empty when usable); nothing in a config is
executed. It covers the structure, each pin's capability on the target chip (`pins`) and the
conversion time (`timing_problems`), so a config that passes is one the board can run.
A channel's optional `role` says what it measures: "vessel" (default) or "env", the surroundings
temperature the host reduction uses (`heatlog reduce --env-col`). The role lives in the config
only: the log header's channel table has no spare field for it.
See firmware/config.example.json.
"""

import json

from . import pins

MAX_CONFIG_BYTES = 4096
KINDS = ("adc_divider", "ads1115", "max31865", "ina226", "ina219")
POWER_KINDS = ("ina226", "ina219")  # one config channel, two logged ones (bus, shunt)
MODELS = {
    "steinhart_hart": ("A", "B", "C"),
    "beta": ("R25", "beta"),
    "callendar_van_dusen": ("R0",),
}
ADS_RATES_SPS = (8, 16, 32, 64, 128, 250, 475, 860)
MAX_SAMPLE_MS = 4000  # all conversions of one sample must fit in min(interval_ms, this)
ROLES = ("vessel", "env")  # what a channel measures; "env": the surroundings (room) temperature
DEFAULTS = {"oversample": 16, "flush_ms": 5000, "watchdog_ms": 8000, "led_pin": None}


def _is_int(v):
    return isinstance(v, int) and not isinstance(v, bool)


def _dnl_pair(k, v):
    return isinstance(k, str) and k.isdigit() and int(k) < 4096 and _is_int(v) and 0 <= v < 4096


def _is_num(v):
    return (isinstance(v, (int, float))) and not isinstance(v, bool)


def _int_in(errs, d, key, lo, hi, where):
    v = d.get(key)
    if not _is_int(v) or v < lo or v > hi:
        errs.append(where + key + " must be an integer in " + str(lo) + ".." + str(hi))
        return False
    return True


def _text(errs, d, key, where, max_len=16):
    v = d.get(key)
    if not isinstance(v, str) or not 0 < len(v) <= max_len or not all(32 < ord(c) < 127 for c in v):
        errs.append(where + key + " must be 1.." + str(max_len) + " printable ASCII characters")


def _model(errs, ch, where):
    m = ch.get("model")
    if not isinstance(m, dict) or m.get("type") not in MODELS:
        errs.append(where + "model.type must be one of " + ", ".join(MODELS))
        return
    for k in MODELS[m["type"]]:
        if not _is_num(m.get(k)):
            errs.append(where + "model." + k + " must be a number")
    for k, v in m.items():
        if k != "type" and not _is_num(v):
            errs.append(where + "model." + k + " must be a number")


def _channel(errs, ch, i):
    where = "channels[" + str(i) + "]."
    if not isinstance(ch, dict):
        errs.append(where[:-1] + " must be an object")
        return
    kind = ch.get("kind")
    if kind not in KINDS:
        errs.append(where + "kind must be one of " + ", ".join(KINDS))
        return
    _text(errs, ch, "probe_id", where)
    if kind in POWER_KINDS:
        _power(errs, ch, where)
        return
    _model(errs, ch, where)
    if ch.get("role", "vessel") not in ROLES:
        errs.append(where + "role must be one of " + ", ".join(ROLES))
    if kind == "adc_divider":
        _int_in(errs, ch, "pin", 0, 48, where)
        if "excitation_pin" in ch:
            _int_in(errs, ch, "excitation_pin", 0, 48, where)
        if "excitation_divider" in ch:
            _int_in(errs, ch, "excitation_divider", 1, 4, where)
        _int_in(errs, ch, "r_fixed_ohm", 1, 4000000, where)
        if ch.get("ntc_side", "low") not in ("low", "high"):
            errs.append(where + "ntc_side must be low or high")
        dnl = ch.get("dnl", {})
        if (
            not isinstance(dnl, dict)
            or len(dnl) > 64
            or not all(_dnl_pair(k, v) for k, v in dnl.items())
        ):
            errs.append(
                where + 'dnl must map at most 64 codes to corrected codes, e.g. {"512": 511}'
            )
    elif kind == "ads1115":
        _int_in(errs, ch, "address", 0x48, 0x4B, where)
        _int_in(errs, ch, "signal", 0, 7, where)
        _int_in(errs, ch, "excitation", 0, 7, where)
        _int_in(errs, ch, "gain", 0, 5, where)
        _int_in(errs, ch, "rate", 0, 7, where)
        _int_in(errs, ch, "r_fixed_ohm", 1, 4000000, where)
        _bus(errs, ch, "i2c", ("id", "sda", "scl"), where)
    else:
        _int_in(errs, ch, "cs", 0, 48, where)
        _int_in(errs, ch, "wires", 2, 4, where)
        if not _is_num(ch.get("r_ref_ohm")) or not 10 <= ch["r_ref_ohm"] <= 10000:
            errs.append(where + "r_ref_ohm must be a number in 10..10000")
        if ch.get("mains_hz", 50) not in (50, 60):
            errs.append(where + "mains_hz must be 50 or 60")
        m = ch.get("model")
        if isinstance(m, dict) and m.get("type") in MODELS and m["type"] != "callendar_van_dusen":
            errs.append(where + "model.type must be callendar_van_dusen for a max31865 RTD")
        lo = ch.get("fault_low_C", -200)
        hi = ch.get("fault_high_C", 850)
        if not (_is_num(lo) and _is_num(hi) and -250 <= lo < hi <= 1000):
            errs.append(where + "fault_low_C < fault_high_C must be numbers in -250..1000 degC")
        if ch.get("bias", "always") not in ("always", "conversion"):
            errs.append(where + "bias must be always or conversion")
        if "bias_settle_ms" in ch:
            _int_in(errs, ch, "bias_settle_ms", 1, 100, where)
        _bus(errs, ch, "spi", ("id", "sck", "mosi", "miso"), where)


def _power(errs, ch, where):
    """An INA226/INA219 monitor in the heater's low-voltage circuit (it measures, never switches)."""
    from . import ina2xx  # only a config with a monitor loads the driver (board heap)

    kind = ch["kind"]
    _int_in(errs, ch, "address", 0x40, 0x4F, where)
    _bus(errs, ch, "i2c", ("id", "sda", "scl"), where)
    shunt = ch.get("shunt_ohm")
    if not _is_num(shunt) or not 0.0001 <= shunt <= 100:
        errs.append(where + "shunt_ohm must be a number in 0.0001..100 (the shunt resistor)")
        shunt = None
    avgs = ina2xx.INA226_AVERAGES if kind == "ina226" else ina2xx.INA219_AVERAGES
    if ch.get("averages", 16) not in avgs:
        errs.append(where + "averages must be one of " + ", ".join(str(a) for a in avgs))
    full_mv = 81.92
    if kind == "ina226":
        if ch.get("conversion_us", 1100) not in ina2xx.INA226_CT_US:
            errs.append(
                where + "conversion_us must be one of "
                + ", ".join(str(t) for t in ina2xx.INA226_CT_US)
            )  # fmt: skip
    else:
        pga = ch.get("shunt_range_mV", 320)
        if pga not in ina2xx.INA219_PGA_MV:
            errs.append(where + "shunt_range_mV must be 40, 80, 160 or 320")
        else:
            full_mv = pga
        if ch.get("bus_range_V", 32) not in (16, 32):
            errs.append(where + "bus_range_V must be 16 or 32")
    imax = ch.get("max_current_A")
    if imax is not None:
        if not _is_num(imax) or not 0 < imax <= 50:
            errs.append(where + "max_current_A must be a number in 0..50")
        elif shunt is not None and imax * shunt * 1000 > full_mv:
            errs.append(
                where + "max_current_A x shunt_ohm = " + str(round(imax * shunt * 1000, 2))
                + " mV exceeds the " + kind + " shunt range of " + str(full_mv)
                + " mV; use a smaller shunt" + (" or a wider shunt_range_mV" if kind == "ina219" else "")
            )  # fmt: skip


def power_settings(ch):
    """(averages, conversion index, pga index, 32 V bus) of a validated power channel."""
    from . import ina2xx

    if ch["kind"] == "ina226":
        return ch.get("averages", 16), _ct_index(ch.get("conversion_us", 1100)), 3, True
    return (
        ch.get("averages", 16),
        0,
        ina2xx.INA219_PGA_MV.index(ch.get("shunt_range_mV", 320)),
        ch.get("bus_range_V", 32) == 32,
    )


def _ct_index(us):
    from . import ina2xx

    return ina2xx.INA226_CT_US.index(us)


def logged_channels(cfg):
    """How many channels a run log holds for cfg: a power monitor logs two (bus, shunt)."""
    return sum(2 if ch.get("kind") in POWER_KINDS else 1 for ch in cfg["channels"])


def _bus(errs, ch, key, fields, where):
    b = ch.get(key)
    if not isinstance(b, dict):
        errs.append(where + key + " must be an object with " + ", ".join(fields))
        return
    for f in fields:
        _int_in(errs, b, f, 0, 48, where + key + ".")


def sample_time_ms(cfg):
    """Worst-case time to read every channel once (conversion waits only), in ms."""
    n = cfg.get("oversample", 16)
    t = 0
    for ch in cfg["channels"]:
        if ch["kind"] == "ads1115":
            t += 2 * n * (1100 // ADS_RATES_SPS[ch["rate"]] + 2)
        elif ch["kind"] == "max31865":
            t += n * ((66 if ch.get("mains_hz", 50) == 50 else 55) + (bias_settle_ms(ch) or 0))
        elif ch["kind"] in POWER_KINDS:
            t += 2  # two register reads; the device converts on its own
        else:
            t += 1 + n // 8
    return t


def bias_settle_ms(ch):
    """MAX31865 channel: ms the bias settles before each conversion, or None if always on."""
    if ch.get("bias", "always") == "conversion":
        return ch.get("bias_settle_ms", 10)
    return None


def timing_problems(cfg):
    """[] if one sample's conversions fit in min(interval_ms, 4 s) and leave the watchdog a
    second to spare (a flash flush can take ~0.4 s); cfg must be well formed."""
    t = sample_time_ms(cfg)
    out = []
    if t > min(cfg["interval_ms"], MAX_SAMPLE_MS):
        out.append(
            "oversample x conversion time (" + str(t) + " ms) exceeds min(interval_ms, 4000 ms);"
            " lower oversample or raise interval_ms"
        )
    for i, ch in enumerate(cfg["channels"]):
        if ch["kind"] in POWER_KINDS:
            from . import ina2xx

            avg, ct, _, _ = power_settings(ch)
            r = ina2xx.result_ms(ch["kind"], avg, ct)
            if r > cfg["interval_ms"]:
                out.append(
                    "channels[" + str(i) + "]: averages x conversion time (" + str(r)
                    + " ms) exceeds interval_ms; readings would repeat: lower averages"
                )  # fmt: skip
    wd = cfg.get("watchdog_ms", DEFAULTS["watchdog_ms"])
    if t + 1000 > wd:
        out.append(
            "watchdog_ms " + str(wd) + " is shorter than one sample (" + str(t) + " ms) + 1000 ms;"
            " raise watchdog_ms or lower oversample"
        )
    return out


def _pin_problems(errs, cfg, board):
    """Each pin's capability on `board` and pins claimed for two different jobs."""
    roles = {}

    def claim(pin, role, where):
        prev = roles.get(pin)
        if prev is None:
            roles[pin] = role
        elif prev != role:
            errs.append(where + ": GPIO " + str(pin) + " is already used as " + prev)

    for i, ch in enumerate(cfg["channels"]):
        if not isinstance(ch, dict):
            continue
        where = "channels[" + str(i) + "]."
        kind = ch.get("kind")
        if kind == "adc_divider":
            if board == "esp32" and "excitation_pin" not in ch:
                errs.append(
                    where + "excitation_pin is needed on esp32: its ADC is not ratiometric, so "
                    "the divider's excitation is read too (an ADC1 pin)"
                )
            elif board != "esp32" and "excitation_pin" in ch:
                errs.append(where + "excitation_pin is for esp32; the rp2 ADC is ratiometric")
            for key in ("pin", "excitation_pin"):
                p = ch.get(key)
                if _is_int(p):
                    if not pins.adc_ok(board, p):
                        errs.append(
                            where + key + ": GPIO " + str(p) + " is not an ADC input on "
                            + board + " (" + pins.ADC_TEXT[board] + ")"
                        )  # fmt: skip
                    claim(p, where + key, where + key)
            continue
        bus = "spi" if kind == "max31865" else "i2c"
        b = ch.get(bus) if kind in KINDS else None
        if isinstance(b, dict):
            bid = b.get("id")
            if _is_int(bid) and bid not in pins.bus_ids(board, bus):
                ids = " and ".join(str(x) for x in pins.bus_ids(board, bus))
                errs.append(where + bus + ".id: " + board + " " + bus.upper() + " ids are " + ids)
            for f in ("sda", "scl") if bus == "i2c" else ("sck", "mosi", "miso"):
                p = b.get(f)
                if _is_int(p) and _is_int(bid):
                    why = pins.bus_pin_problem(board, bus, bid, f, p)
                    if why:
                        errs.append(where + bus + "." + f + ": " + why)
                    claim(p, bus + str(bid) + "." + f, where + bus + "." + f)
        cs = ch.get("cs")
        if kind == "max31865" and _is_int(cs):
            if not pins.output_ok(board, cs):
                errs.append(where + "cs: GPIO " + str(cs) + " cannot be an output on " + board)
            claim(cs, where + "cs", where + "cs")
    led = cfg.get("led_pin")
    if _is_int(led):
        if not pins.output_ok(board, led):
            errs.append("led_pin: GPIO " + str(led) + " cannot be an output on " + board)
        claim(led, "led_pin", "led_pin")


def validate(cfg, port=None):
    """Every problem with a parsed config, each one line naming the key; [] if it is usable.
    port: "rp2"/"esp32" (default: this board's, from sys.platform; None off a board)."""
    errs = []
    if not isinstance(cfg, dict):
        return ["config must be a JSON object"]
    board, problem = pins.board_for(cfg.get("board"), port or pins.port())
    if problem:
        errs.append(problem)
    _text(errs, cfg, "board_id", "")
    _int_in(errs, cfg, "interval_ms", 100, 3600000, "")
    for key, lo, hi in (
        ("oversample", 1, 256),
        ("flush_ms", 100, 600000),
        ("watchdog_ms", 1000, pins.watchdog_max_ms(board)),
        ("fault_check_s", 10, 86400),
    ):
        if key in cfg:
            _int_in(errs, cfg, key, lo, hi, "")
    led = cfg.get("led_pin")
    if led is not None and not (_is_int(led) or led == "LED"):
        errs.append('led_pin must be a pin number, "LED" or null')
    chans = cfg.get("channels")
    if not isinstance(chans, list) or not 1 <= len(chans) <= 8:
        errs.append("channels must be a list of 1..8 channels")
    else:
        for i, ch in enumerate(chans):
            _channel(errs, ch, i)
        if not errs and logged_channels(cfg) > 8:
            errs.append("channels: a power monitor logs two channels; at most 8 in all")
        roles = [ch.get("role", "vessel") for ch in chans if isinstance(ch, dict)]
        if roles and "vessel" not in roles:
            errs.append('channels: at least one channel must have role "vessel" (the default)')
        if roles.count("env") > 1:
            errs.append('channels: at most one channel may have role "env" (the surroundings)')
        if board is not None:
            _pin_problems(errs, cfg, board)
    if not errs:  # the timing needs well-formed numbers
        errs += timing_problems(cfg)
    return errs


def parse(text, port=None):
    """(config dict with defaults, []) or (None, problems) for JSON text from the file or host."""
    if len(text) > MAX_CONFIG_BYTES:
        return None, ["config longer than " + str(MAX_CONFIG_BYTES) + " bytes"]
    try:
        cfg = json.loads(text)
    except ValueError:
        return None, ["config is not valid JSON"]
    errs = validate(cfg, port)
    if errs:
        return None, errs
    for k, v in DEFAULTS.items():
        if k not in cfg:
            cfg[k] = v
    return cfg, []
