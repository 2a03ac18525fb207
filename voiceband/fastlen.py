"""FFT lengths that pocketfft (numpy.fft) transforms quickly, without importing scipy.fft.

:func:`next_fast_len` follows the rule of ``scipy.fft.next_fast_len``: the smallest
2-3-5-smooth integer >= n for real transforms, 2-3-5-7-11-smooth for complex ones
(``tests/test_fastlen.py`` compares the two).  Importing :mod:`scipy.fft` costs about
0.6 s (its array-API layer walks numpy's namespace), most of a short command's run,
while the transforms themselves are numpy's.
"""

from __future__ import annotations

__all__ = ["next_fast_len"]


def next_fast_len(n: int, *, real: bool = False) -> int:
    """Smallest integer >= ``n`` whose prime factors are 2, 3, 5 (``real``) or 2, 3, 5, 7, 11.

    >>> next_fast_len(1001, real=True), next_fast_len(1001)
    (1024, 1008)
    """
    n = int(n)
    if n <= 1:
        return 1
    odd_primes = (3, 5) if real else (3, 5, 7, 11)
    best = 1 << (n - 1).bit_length()
    # every product of the odd primes below the best so far, times the power of two that lifts it to n
    products = [1]
    for p in odd_primes:
        grown = []
        for q in products:
            while q < best:
                grown.append(q)
                q *= p
        products = grown
    for q in products:
        need = -(-n // q)
        best = min(best, q << (need - 1).bit_length())
    return best
