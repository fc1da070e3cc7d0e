// Sobol' direction numbers of Joe & Kuo (2008), the set "new-joe-kuo-6.21201" (S. Joe and F. Y. Kuo,
// Constructing Sobol sequences with better two-dimensional projections, SIAM J. Sci. Comput. 30, 2635–2654).
// The first 50 dimensions, copied from the same set as SciPy ships it (scipy/stats/_sobol_direction_numbers.npz,
// arrays "poly" and "vinit"), so the unscrambled sequence equals scipy.stats.qmc.Sobol(scramble=False).
namespace Runfold.Shared.Doe;

internal static class SobolDirectionNumbers
{
    /// <summary>One dimension: the primitive polynomial as a bit pattern (leading and trailing 1 included;
    /// its degree is the highest set bit) and the initial direction numbers m_1…m_s.</summary>
    internal readonly record struct Dimension(int Polynomial, int[] Initial);

    /// <summary>Dimension 1 is the van der Corput sequence (every m_j = 1).</summary>
    internal static readonly Dimension[] Table =
    [
        new(1, [1]),
        new(3, [1]),
        new(7, [1, 3]),
        new(11, [1, 3, 1]),
        new(13, [1, 1, 1]),
        new(19, [1, 1, 3, 3]),
        new(25, [1, 3, 5, 13]),
        new(37, [1, 1, 5, 5, 17]),
        new(41, [1, 1, 5, 5, 5]),
        new(47, [1, 1, 7, 11, 19]),
        new(55, [1, 1, 5, 1, 1]),
        new(59, [1, 1, 1, 3, 11]),
        new(61, [1, 3, 5, 5, 31]),
        new(67, [1, 3, 3, 9, 7, 49]),
        new(91, [1, 1, 1, 15, 21, 21]),
        new(97, [1, 3, 1, 13, 27, 49]),
        new(103, [1, 1, 1, 15, 7, 5]),
        new(109, [1, 3, 1, 15, 13, 25]),
        new(115, [1, 1, 5, 5, 19, 61]),
        new(131, [1, 3, 7, 11, 23, 15, 103]),
        new(137, [1, 3, 7, 13, 13, 15, 69]),
        new(143, [1, 1, 3, 13, 7, 35, 63]),
        new(145, [1, 3, 5, 9, 1, 25, 53]),
        new(157, [1, 3, 1, 13, 9, 35, 107]),
        new(167, [1, 3, 1, 5, 27, 61, 31]),
        new(171, [1, 1, 5, 11, 19, 41, 61]),
        new(185, [1, 3, 5, 3, 3, 13, 69]),
        new(191, [1, 1, 7, 13, 1, 19, 1]),
        new(193, [1, 3, 7, 5, 13, 19, 59]),
        new(203, [1, 1, 3, 9, 25, 29, 41]),
        new(211, [1, 3, 5, 13, 23, 1, 55]),
        new(213, [1, 3, 7, 3, 13, 59, 17]),
        new(229, [1, 3, 1, 3, 5, 53, 69]),
        new(239, [1, 1, 5, 5, 23, 33, 13]),
        new(241, [1, 1, 7, 7, 1, 61, 123]),
        new(247, [1, 1, 7, 9, 13, 61, 49]),
        new(253, [1, 3, 3, 5, 3, 55, 33]),
        new(285, [1, 3, 1, 15, 31, 13, 49, 245]),
        new(299, [1, 3, 5, 15, 31, 59, 63, 97]),
        new(301, [1, 3, 1, 11, 11, 11, 77, 249]),
        new(333, [1, 3, 1, 11, 27, 43, 71, 9]),
        new(351, [1, 1, 7, 15, 21, 11, 81, 45]),
        new(355, [1, 3, 7, 3, 25, 31, 65, 79]),
        new(357, [1, 3, 1, 1, 19, 11, 3, 205]),
        new(361, [1, 1, 5, 9, 19, 21, 29, 157]),
        new(369, [1, 3, 7, 11, 1, 33, 89, 185]),
        new(391, [1, 3, 3, 3, 15, 9, 79, 71]),
        new(397, [1, 3, 7, 11, 15, 39, 119, 27]),
        new(425, [1, 1, 3, 1, 11, 31, 97, 225]),
        new(451, [1, 1, 1, 3, 23, 43, 57, 177]),
    ];
}
