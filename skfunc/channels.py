"""Several channels per sample: curves of several signals logged together.

``X`` stays 2-D, with the channels' columns side by side (channel by
channel), and the layout is declared by ``grid={channel: grid, ...}`` or by
DataFrame columns keyed by ``(channel, time)``. The estimators that accept
it and what each does with the channels are described in the user guide
(:doc:`/channels`). :func:`split_channels` cuts fitted values on the
concatenated ``grid_`` (coefficient functions, components, means) back into
channels.
"""

from ._channels import split_channels

__all__ = ["split_channels"]
