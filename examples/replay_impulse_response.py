"""Replay a measured impulse response through the receivers.

A researcher with a channel probe recorded at sea writes it as a tap list (delay, complex gain)
and runs it through each receiver at a chosen SNR. ``data/probe_replay.csv`` is an invented,
illustrative response of our own (a strong direct path and two later clusters), not a
measurement; replace it with your own file in the documented format.

    python examples/replay_impulse_response.py [--file F] [--snr-db 18] [--rate-baud 2000]
"""

import argparse
from pathlib import Path

from aculink.channel import load_channel_file
from aculink.modem import simulate_link

HERE = Path(__file__).resolve().parent


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--file", default=str(HERE / "data" / "probe_replay.csv"))
    parser.add_argument("--snr-db", type=float, default=18.0)
    parser.add_argument("--rate-baud", type=float, default=2000.0)
    parser.add_argument("--symbols", type=int, default=8000)
    args = parser.parse_args(argv)

    channel = load_channel_file(args.file)
    stats = channel.statistics()
    print(f"{args.file}: {channel.n_paths} taps, 90% spread {stats['spread_90_s'] * 1000:.1f} ms, "
          f"band {channel.carrier_hz / 1000:g} kHz +- {channel.bandwidth_hz / 2000:g} kHz")
    results = {}
    for receiver in ("none", "linear", "dfe"):
        r = simulate_link(channel, symbol_rate_baud=args.rate_baud, modulation="qpsk", receiver=receiver,
                          snr_db=args.snr_db, n_symbols=args.symbols, max_errors=200, seed=1)
        results[receiver] = r
        print(f"  {receiver:>6}: BER {r.ber:.2e} [{r.ber_low:.1e}, {r.ber_high:.1e}], output SNR "
              f"{r.snr_out_db:5.1f} dB (predicted {r.snr_predicted_db:5.1f} dB)")
    return results


if __name__ == "__main__":
    main()
