"""Superposition of field sources, evaluated in bounded-memory chunks.

Magnetostatic fields superpose linearly (the Biot-Savart law is linear in the
current density; J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999,
sec. 5.2-5.3), so a scene's field is the vector sum of its sources' fields.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from typing import Protocol, runtime_checkable

import numpy as np

from siting.fields._frame import as_points, as_vector

#: Points per chunk: small enough that a chunk's temporaries stay in cache-sized
#: blocks and memory stays bounded, large enough to amortise call overhead.
DEFAULT_CHUNK = 1 << 15


@runtime_checkable
class Source(Protocol):
    """Anything with ``field(points (n, 3) [m]) -> B (n, 3) [T]``."""

    def field(self, points: np.ndarray) -> np.ndarray: ...


@dataclass(frozen=True, eq=False)
class Uniform:
    """A uniform background field, e.g. the Earth's field (about 50 uT).

    Parameters
    ----------
    b : array_like, shape (3,) [T]
    """

    b: np.ndarray

    def __post_init__(self):
        object.__setattr__(self, "b", as_vector(self.b, "b"))

    def field(self, points) -> np.ndarray:
        pts = as_points(points)
        return np.broadcast_to(self.b, pts.shape).copy()


@dataclass(frozen=True, eq=False)
class Scene:
    """Vector superposition of any number of sources.

    Parameters
    ----------
    sources : sequence of Source
    chunk : int
        Points evaluated per block; the working memory is a few times
        ``chunk * 3 * 8`` bytes per source plus the (n, 3) result.
    """

    sources: tuple = field(default_factory=tuple)
    chunk: int = DEFAULT_CHUNK

    def __post_init__(self):
        srcs = tuple(self.sources)
        for i, src in enumerate(srcs):
            if not isinstance(src, Source):
                raise TypeError(f"sources[{i}] has no field(points) method: {src!r}")
        object.__setattr__(self, "sources", srcs)
        if int(self.chunk) < 1:
            raise ValueError("chunk must be >= 1")

    def chunks(self, n: int) -> Iterator[slice]:
        """Slices of ``range(n)`` of at most ``chunk`` points."""
        for start in range(0, n, self.chunk):
            yield slice(start, min(start + self.chunk, n))

    def field(self, points) -> np.ndarray:
        """B at ``points`` (n, 3) [m] -> (n, 3) [T]; NaN where any source is undefined."""
        pts = as_points(points)
        out = np.zeros_like(pts)
        for sl in self.chunks(len(pts)):
            block = pts[sl]
            acc = out[sl]
            for src in self.sources:
                acc += src.field(block)
        return out

    def magnitude(self, points) -> np.ndarray:
        """|B| at ``points`` (n, 3) [m] -> (n,) [T], in the same bounded chunks."""
        pts = as_points(points)
        out = np.empty(len(pts))
        for sl in self.chunks(len(pts)):
            block = pts[sl]
            acc = np.zeros_like(block)
            for src in self.sources:
                acc += src.field(block)
            out[sl] = np.sqrt(np.einsum("ij,ij->i", acc, acc))
        return out

    def with_sources(self, extra: Iterable) -> Scene:
        """A new scene with ``extra`` sources appended."""
        return Scene(self.sources + tuple(extra), chunk=self.chunk)
