using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling.RadialBasis;

namespace Runfold.Shared.Tests.Modeling;

public sealed class RadialBasisTests
{
    [Theory]
    [InlineData(RadialBasisKernel.Cubic)]
    [InlineData(RadialBasisKernel.ThinPlateSpline)]
    [InlineData(RadialBasisKernel.Multiquadric)]
    public void Rippas_closed_form_leave_one_out_equals_refitting_without_each_run(RadialBasisKernel kernel)
    {
        // Rippa (1999), "An algorithm for selecting a good value for the parameter c in radial basis function
        // interpolation", Adv. Comput. Math. 11: eₖ = cₖ / (A⁻¹)ₖₖ must equal brute-force refits.
        var design = ModelingFixtures.Designs.Design("Hartmann-6", 60);
        var space = ModelingFixtures.UnitSpace(6);
        var x = ModelingFixtures.Coded(design.Points);
        var y = design.Values;
        var fitted = RadialBasisModel.Fit(space, x, y, new RadialBasisOptions { Kernel = kernel });
        var fixedShape = new RadialBasisOptions { Kernel = kernel, Shape = kernel == RadialBasisKernel.Multiquadric ? fitted.Shape : null };
        for (var i = 0; i < y.Length; i++)
        {
            var keep = Enumerable.Range(0, y.Length).Where(r => r != i).ToArray();
            var refit = RadialBasisModel.Fit(space, Matrix<double>.Build.DenseOfRowVectors(keep.Select(x.Row)), [.. keep.Select(r => y[r])], fixedShape);
            var bruteForce = refit.Predict(x.SubMatrix(i, 1, 0, 6)).Mean[0];
            Assert.Equal(bruteForce, fitted.CrossValidation.Predicted[i], 8);
        }
    }

    [Theory]
    [InlineData(RadialBasisKernel.Cubic)]
    [InlineData(RadialBasisKernel.ThinPlateSpline)]
    [InlineData(RadialBasisKernel.Multiquadric)]
    public void The_interpolant_passes_through_the_runs_and_reproduces_a_linear_function(RadialBasisKernel kernel)
    {
        // Interpolation and linear precision of a radial basis interpolant with a linear tail (Buhmann 2003, §5).
        var design = ModelingFixtures.Designs.Design("Branin", 20);
        var space = ModelingFixtures.UnitSpace(2);
        var x = ModelingFixtures.Coded(design.Points);
        var fitted = RadialBasisModel.Fit(space, x, design.Values, new RadialBasisOptions { Kernel = kernel });
        var atRuns = fitted.Predict(x).Mean;
        for (var i = 0; i < design.Values.Length; i++) Assert.Equal(design.Values[i], atRuns[i], 6);
        Assert.Null(fitted.Predict(x).StandardDeviation);

        var linear = Enumerable.Range(0, 20).Select(i => 2 + 3 * x[i, 0] - x[i, 1]).ToArray();
        var plane = RadialBasisModel.Fit(space, x, linear, new RadialBasisOptions { Kernel = kernel });
        var probe = Matrix<double>.Build.DenseOfRowArrays([0.3, -0.7], [-0.9, 0.95]);
        var p = plane.Predict(probe).Mean;
        Assert.Equal(2 + 0.9 + 0.7, p[0], 6);
        Assert.Equal(2 - 2.7 - 0.95, p[1], 6);
    }

    [Fact]
    public void Too_few_runs_for_the_tail_are_refused_with_a_sentence()
    {
        var space = ModelingFixtures.UnitSpace(3);
        var x = Matrix<double>.Build.DenseOfRowArrays([0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]);
        var error = Assert.Throws<ArgumentException>(() => RadialBasisModel.Fit(space, x, [1, 2, 3, 4]));
        Assert.Contains("need at least 5 runs; there are 4", error.Message, StringComparison.Ordinal);
    }
}
