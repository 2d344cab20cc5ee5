"""The channel stage: arrivals become a sparse, time-varying baseband ISI channel and a budget.

:class:`Channel` (sparse paths over the modem band), :func:`channel_for_site` (trace a site and
build the channel), :func:`load_channel_file` (tap lists and measured responses),
:func:`apply_channel` (static or time-varying application), :func:`link_budget` /
:class:`LinkBudget` (sonar equation) and :func:`colored_noise` (noise that follows NL(f)).
"""

from aculink.channel.apply import apply_channel
from aculink.channel.budget import LinkBudget, link_budget
from aculink.channel.files import load_channel_file
from aculink.channel.model import Channel, SymbolTaps, channel_for_site
from aculink.channel.noise import colored_noise

__all__ = ["Channel", "SymbolTaps", "apply_channel", "link_budget", "LinkBudget", "colored_noise",
           "load_channel_file", "channel_for_site"]
