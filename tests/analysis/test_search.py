def test_single_query_thread_limit_is_put_back():
    """BLAS's thread count is one setting per process: a single-query search in the main
    thread runs under the limit and puts the count back; searches from other threads (a
    server) leave it alone (common practice, no source: a process-wide setting changed by a
    library is restored)."""
    import threading

    from reflib.analysis import search as search_mod

    controllers = search_mod._blas_controller().lib_controllers
    blas = [c for c in controllers if c.user_api == "blas"]

    def counts():
        return [c.get_num_threads() for c in blas]

    before = counts()
    with search_mod._single_query_threads():
        inside = counts()
    assert counts() == before
    assert inside == [min(n, search_mod.SINGLE_QUERY_BLAS_THREADS) for n in before]
    seen = []

    def work():
        with search_mod._single_query_threads():
            seen.append(counts())

    threads = [threading.Thread(target=work) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=30)
    assert seen == [before] * 4 and counts() == before
