using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class DesignAugmentationTests
{
    [Fact]
    public void Added_runs_lie_farther_from_the_old_runs_than_random_additions_would()
    {
        var space = DoeFixtures.Unit(3);
        var existing = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FullFactorial)).Value!.Matrix; // the 8 corners
        var added = DesignAugmentation.Augment(existing, 6).Value!;
        Assert.Equal(6, added.RunCount);
        var old = DesignMetrics.ToRows(existing.Coded);
        var nearestOld = DesignMetrics.ToRows(added.Coded).Select(r => old.Min(o => Math.Sqrt(DesignMetrics.SquaredDistance(r, o)))).ToList();
        // The first run goes to the centre, the point farthest from every corner (distance √3).
        Assert.Equal(Math.Sqrt(3), nearestOld.Max(), 1);
        // Random settings (a random Latin hypercube of the same size) sit closer to the corners on average.
        var random = DesignMetrics.ToRows(DesignBuilder.Build(space, new DesignSpec(DesignMethod.LatinHypercube, Runs: 6, Maximin: false)).Value!.Matrix.Coded)
            .Select(r => old.Min(o => Math.Sqrt(DesignMetrics.SquaredDistance(r, o)))).ToList();
        Assert.True(nearestOld.Min() > random.Average(), $"{nearestOld.Min():0.###} vs {random.Average():0.###}");
        // And apart from each other.
        Assert.True(DesignMetrics.MinDistance(added.Coded) > 0.5);
    }

    [Fact]
    public void Augmentation_honours_constraints_and_the_seed()
    {
        var space = DoeFixtures.HeatSink(withBaseWidth: true);
        var constraints = DesignConstraints.Parse(["fin_thickness * fin_count <= 0.6 * base_width"], space).Value!;
        var existing = DesignBuilder.Build(space, new DesignSpec(DesignMethod.LatinHypercube, Runs: 20, Constraints: constraints.Texts)).Value!.Matrix;
        var first = DesignAugmentation.Augment(existing, 10, constraints, new AugmentOptions(Seed: 4)).Value!;
        var again = DesignAugmentation.Augment(existing, 10, constraints, new AugmentOptions(Seed: 4)).Value!;
        Assert.Equal(first.Coded, again.Coded);
        Assert.All(first.NaturalRows(), r => Assert.True(constraints.IsFeasible(r)));
        Assert.All(first.NaturalRows(), r => Assert.Equal(Math.Round(r[2]), r[2]));
    }

    [Fact]
    public void Asking_for_no_runs_is_a_field_error()
    {
        var existing = DesignBuilder.Build(DoeFixtures.Unit(2), new DesignSpec(DesignMethod.FullFactorial)).Value!.Matrix;
        Assert.Equal(OutcomeKind.Invalid, DesignAugmentation.Augment(existing, 0).Kind);
    }
}
