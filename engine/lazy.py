"""A computed-once attribute, as functools.cached_property without its per-instance lock.

Before Python 3.12, cached_property takes a per-instance lock on every first access (the functools
documentation: "Prior to Python 3.12, cached_property included an undocumented lock"); a calibration
is filled by one caller at a time, and a race would only compute the same value twice.
"""

from __future__ import annotations


class lazy:  # noqa: N801 - used as a decorator, like property
    """``@lazy`` on a method: computed on first access, then read from the instance's __dict__."""

    def __init__(self, func):
        self.func = func
        self.name = func.__name__
        self.__doc__ = func.__doc__

    def __set_name__(self, owner, name):
        self.name = name

    def __get__(self, instance, owner=None):
        if instance is None:
            return self
        value = instance.__dict__[self.name] = self.func(instance)
        return value
