"""The views, one textual mode each; the app's number keys switch between them."""

from .archive import ArchiveView
from .help import HelpView
from .instruments import InstrumentsView
from .live import LiveView
from .lot import LotView
from .results import ResultsView
from .setup import SetupView

VIEWS = {
    "instruments": InstrumentsView,
    "setup": SetupView,
    "live": LiveView,
    "results": ResultsView,
    "lot": LotView,
    "archive": ArchiveView,
    "help": HelpView,
}
