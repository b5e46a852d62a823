"""strobeplan.quickdc.dataclass behaves as dataclasses.dataclass (the oracle) for what the
package uses: positional and keyword arguments, defaults and factories, non-init fields,
inheritance, repr, equality, frozen assignment and hashing, fields/asdict/replace."""

from __future__ import annotations

import dataclasses

import pytest

from strobeplan.quickdc import dataclass as quick


def _pair(frozen):
    made = []
    for deco in (dataclasses.dataclass(frozen=frozen), quick(frozen=frozen)):
        @deco
        class Base:
            a: int
            b: float = 2.5

        @deco
        class Point(Base):
            c: list = dataclasses.field(default_factory=list)
            d: str = dataclasses.field(default="x", repr=False, compare=False)
            e: dict = dataclasses.field(default_factory=dict, init=False, compare=False)

        made.append(Point)
    return made


CALLS = [((1,), {}), ((1, 3.0), {}), ((1,), {"c": [1]}), ((), {"a": 4, "d": "y"}),
         ((1, 2.0, [3], "z"), {})]
BAD = [((), {}), ((1,), {"zz": 1}), ((1, 2.0), {"b": 3.0}), ((1, 2, [], "d", 5), {}),
       ((1,), {"e": {}})]


@pytest.mark.parametrize("frozen", [False, True])
def test_same_behaviour_as_the_standard_decorator(frozen):
    std, qk = _pair(frozen)
    for args, kw in CALLS:
        s, q = std(*args, **kw), qk(*args, **kw)
        assert repr(s) == repr(q)
        assert dataclasses.asdict(s) == dataclasses.asdict(q)
        assert [f.name for f in dataclasses.fields(s)] == [f.name for f in dataclasses.fields(q)]
        assert q == qk(*args, **kw) and not (q != qk(*args, **kw))
        assert (q == qk(9)) == (s == std(9))
        assert q.__eq__(s) is NotImplemented  # another class
        r = dataclasses.replace(q, a=7)
        assert r.a == 7 and r.c == q.c and type(r) is qk
        if frozen:
            with pytest.raises(dataclasses.FrozenInstanceError):
                q.a = 5
            with pytest.raises(dataclasses.FrozenInstanceError):
                del q.b
        else:
            q.a = 5
            assert q.a == 5
    assert qk(1).c is not qk(1).c  # a fresh default per instance
    for args, kw in BAD:
        with pytest.raises(TypeError):
            std(*args, **kw)
        with pytest.raises(TypeError):
            qk(*args, **kw)
    if frozen:
        assert hash(qk(1, 2.0, (), "u")) == hash(qk(1, 2.0, (), "v"))  # d not compared
        assert hash(std(1, 2.0, (), "u")) == hash(std(1, 2.0, (), "v"))
    else:
        with pytest.raises(TypeError):
            hash(qk(1))
        with pytest.raises(TypeError):
            hash(std(1))


def test_post_init_runs():
    @quick
    class P:
        x: int

        def __post_init__(self):
            self.y = 2 * self.x

    assert P(3).y == 6
