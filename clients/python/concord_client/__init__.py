"""concord's Python client: log an ensemble's predictions to concord, read its reports.

    import concord_client
    log = concord_client.Logger("http://127.0.0.1:8750", model="apple-grader")
    log.log(request_id, probs)          # probs: members x classes (lists or numpy)

See clients/python/README.md in concord's repository.
"""

from .backoff import parse_retry_after
from .file_sink import FileSink
from .frames import (confusion_frame, pair_frames, reliability_frame, window_figures,
                     windows_frame)
from .http_sink import HttpSink, PermanentError, RetryableError, SendError
from .logger import Logger, file_logger
from .report import fetch_report, list_models, load_report, report_url

__version__ = "0.1.0"
__all__ = ["Logger", "file_logger", "FileSink", "HttpSink", "SendError", "RetryableError",
           "PermanentError", "load_report", "fetch_report", "report_url", "list_models",
           "windows_frame", "pair_frames", "confusion_frame", "reliability_frame",
           "window_figures", "parse_retry_after"]
