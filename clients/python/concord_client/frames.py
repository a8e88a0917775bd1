"""concord's JSON report as pandas DataFrames (pandas is needed here only).

windows_frame: one row per window (day, week or the whole range), one column
per figure, named by its path in the JSON ("uncertainty.mutual_information");
figures given per member or per class get one column each, the name in
brackets ("accuracy.members[hue]", "by_class.recall[premium]").
pair_frames: the M x M pair matrices of one window, with member names.
confusion_frame and reliability_frame: one window's confusion matrix and
calibration bins. Undefined figures (JSON null) are NaN.
"""

PANDAS_MISSING = ("concord_client.%s needs pandas, which is not installed "
                  "(Debian: apt-get install python3-pandas; elsewhere: pip install pandas); "
                  "load_report() gives the same report as plain dicts without it")


def _pandas(what):
    try:
        import pandas
    except ImportError:
        raise ImportError(PANDAS_MISSING % what) from None
    return pandas


def _scalar(v):
    return v is None or isinstance(v, (int, float, bool, str))


def _is_member_path(path):
    return any(seg in ("members", "members_psi") or seg.startswith("by_member")
               for seg in path.split("."))


def _names(path, n, members, classes):
    if _is_member_path(path) and n == len(members):
        return members
    if n == len(classes):
        return classes
    return [str(i) for i in range(n)]


def _flatten(prefix, value, out, members, classes):
    if isinstance(value, dict):
        for key, v in value.items():
            _flatten(prefix + "." + key if prefix else key, v, out, members, classes)
    elif _scalar(value):
        out[prefix] = value
    elif isinstance(value, list) and all(_scalar(v) for v in value):
        for name, v in zip(_names(prefix, len(value), members, classes), value):
            out["%s[%s]" % (prefix, name)] = v
    elif (isinstance(value, list) and _is_member_path(prefix) and len(value) == len(members)
          and all(isinstance(v, dict) for v in value)):
        for name, v in zip(members, value):
            _flatten("%s[%s]" % (prefix, name), v, out, members, classes)
    # matrices and lists of records (pairs, confusion, bins, contested pairs)
    # have frames of their own


def window_figures(report, window):
    """One window's figures as a flat {path: value} dict (no pandas needed)."""
    out = {}
    _flatten("", report["windows"][window], out, report["members"], report["classes"])
    return out


def windows_frame(report):
    """Windows x figures; the index is the window's first day (datetime), named "from"."""
    pd = _pandas("windows_frame")
    rows = [window_figures(report, i) for i in range(len(report["windows"]))]
    frame = pd.DataFrame(rows)
    if "from" in frame:
        frame.index = pd.DatetimeIndex(pd.to_datetime(frame.pop("from")), name="from")
    for col in frame.columns:
        # a figure null in every window (or in some) is a float column of NaN
        if frame[col].dtype == object and all(
                v is None or (isinstance(v, (int, float)) and not isinstance(v, bool))
                for v in frame[col]):
            frame[col] = frame[col].astype(float)
    return frame


def pair_frames(report, window=0):
    """{measure: M x M DataFrame} for every diversity measure with pairs in the window
    (NaN on the diagonal and where a pair is undefined)."""
    pd = _pandas("pair_frames")
    members = report["members"]
    out = {}
    for name, value in (report["windows"][window].get("diversity") or {}).items():
        if isinstance(value, dict) and isinstance(value.get("pairs"), list):
            out[name] = pd.DataFrame(value["pairs"], index=pd.Index(members, name="member"),
                                     columns=members, dtype=float)
    return out


def confusion_frame(report, window=0):
    """The ensemble's K x K confusion counts (rows: true class, columns:
    predicted), or None when the window has no labels."""
    pd = _pandas("confusion_frame")
    accuracy = report["windows"][window].get("accuracy")
    if not accuracy or accuracy.get("confusion") is None:
        return None
    classes = report["classes"]
    return pd.DataFrame(accuracy["confusion"], index=pd.Index(classes, name="true"),
                        columns=pd.Index(classes, name="predicted"))


def reliability_frame(report, window=0):
    """The calibration bins (count, confidence, accuracy), or None without labels."""
    pd = _pandas("reliability_frame")
    calibration = report["windows"][window].get("calibration")
    if not calibration:
        return None
    return pd.DataFrame(calibration["bins"], dtype=float)
