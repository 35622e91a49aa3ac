"""Fuzz: any input gives a Netlist or a located DrcError, never another exception.

Random byte strings and mutations (insert, delete, replace, duplicate) of the
valid corpus decks, read through the file entry point (decoding included).
"""

from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from drc.errors import DrcError
from drc.netlist.reader import ReaderOptions, read_netlist, read_netlist_text

CORPUS = Path(__file__).resolve().parent / "corpus"
SEEDS = [p.read_bytes() for p in sorted(CORPUS.glob("*.cir"))]
_OPTIONS = ReaderOptions(max_elements=10_000)
_TOKENS = [b"{", b"}", b"(", b")", b"=", b"*", b"+", b"\n+ ", b".subckt s a\n", b".ends\n",
           b".param p={q}\n", b"'", b"\"", b"X1 a b s\n", b"\x00", b"\xff", b"\r", b",",
           b" ; ", b".include x.cir\n", b".lib l s\n", b"R1 a b\n", b"{((((1))))}", b"**9**9"]


def _read(tmp_path_factory, data: bytes):
    path = tmp_path_factory.mktemp("fz") / "deck.cir"
    path.write_bytes(data)
    try:
        read_netlist(path, options=_OPTIONS)
    except DrcError as exc:
        assert exc.location is not None, exc
        assert exc.location.file == str(path) or exc.location.file.endswith(".cir")
        exc.render()


@settings(max_examples=150, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(st.binary(max_size=400))
def test_random_bytes(tmp_path_factory, data):
    _read(tmp_path_factory, data)


@st.composite
def mutated(draw):
    data = bytearray(draw(st.sampled_from(SEEDS)))
    for _ in range(draw(st.integers(1, 6))):
        where = draw(st.integers(0, len(data)))
        action = draw(st.integers(0, 3))
        if action == 0:
            data[where:where] = draw(st.sampled_from(_TOKENS))
        elif action == 1:
            data[where:where + draw(st.integers(1, 20))] = b""
        elif action == 2:
            data[where:where + 1] = bytes([draw(st.integers(0, 255))])
        else:
            data[where:where] = data[max(0, where - 30):where]
    return bytes(data)


@settings(max_examples=300, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(mutated())
def test_mutated_corpus(tmp_path_factory, data):
    _read(tmp_path_factory, data)


@settings(max_examples=150, deadline=None)
@given(st.text(alphabet=st.sampled_from(list("RXCV.+*{}()=,'\"0123456789abkmu \n\t;$/"
                                             "subcktendsparamglobal")), max_size=200))
def test_random_text(text):
    try:
        read_netlist_text("title\n" + text, options=_OPTIONS)
    except DrcError as exc:
        assert exc.location is not None
        exc.render()
