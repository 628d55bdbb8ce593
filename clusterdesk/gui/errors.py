"""Turning exceptions into words for the window, and the exception hook.

Problems the user can fix (:class:`~clusterdesk.errors.InputError`, file
errors) are shown as they are written; anything else is a defect, shown with
an apology and the traceback behind a Details button. The hook makes sure an
exception in a slot becomes such a message instead of a crash.
"""

from __future__ import annotations

import sys
import traceback

from ..errors import InputError

__all__ = ["describe_error", "install_exception_hook"]


def describe_error(exc: BaseException, details: str = "") -> tuple[str, str]:
    """Words for an exception and the technical details to offer.

    Parameters
    ----------
    exc : BaseException
    details : str
        Traceback text, when known.

    Returns
    -------
    message, details : str
        ``details`` is '' for problems the user can fix.
    """
    if isinstance(exc, InputError):
        return str(exc), ""
    if isinstance(exc, MemoryError):
        return ("There is not enough memory for this; close other programs, or use a range "
                "limit or fewer components."), details
    if isinstance(exc, OSError):
        where = f" ({exc.filename})" if getattr(exc, "filename", None) else ""
        return (f"{exc.strerror or exc}{where}; check the path, the permissions and the free "
                "disk space."), ""
    return (f"Something unexpected went wrong ({type(exc).__name__}: {exc}). The window is still "
            "usable; your data and results are unchanged."), details or "".join(
        traceback.format_exception(type(exc), exc, exc.__traceback__))


def install_exception_hook(show) -> callable:
    """Route uncaught exceptions (e.g. from slots) to ``show(exc, details)``.

    Parameters
    ----------
    show : callable(BaseException, str)
        Shows the message in the window.

    Returns
    -------
    callable
        The previous hook, for restoring it.
    """
    previous = sys.excepthook

    def hook(kind, exc, tb):
        if issubclass(kind, KeyboardInterrupt):
            previous(kind, exc, tb)
            return
        details = "".join(traceback.format_exception(kind, exc, tb))
        sys.stderr.write(details)
        try:
            show(exc, details)
        except Exception:  # the window itself is broken: fall back to the console
            previous(kind, exc, tb)

    sys.excepthook = hook
    return previous
