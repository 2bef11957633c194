"""The exchange between devices and the office.

The stored record and its checks (:mod:`~tamis.exchange.record`), the CSV
format (:mod:`~tamis.exchange.csv_format`, :mod:`~tamis.exchange.csv_write`,
:mod:`~tamis.exchange.csv_read`), merging versions (:mod:`~tamis.exchange.merge`),
the calc columns and per-file summaries (:mod:`~tamis.exchange.summaries`), the
record ops of the API (:mod:`~tamis.exchange.ops`) and the office commands
(:mod:`~tamis.exchange.office`).

Built on :mod:`tamis.project` and below; imports nothing above.
"""
