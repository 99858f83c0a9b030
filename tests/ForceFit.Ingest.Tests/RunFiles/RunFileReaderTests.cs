using ForceFit.Core.Constants;
using ForceFit.Core.Problems;
using ForceFit.Core.Units;
using ForceFit.Ingest.RunFiles;
using ForceFit.Tests.Shared;

namespace ForceFit.Ingest.Tests.RunFiles;

/// <summary>Reading, merging and validating run files (run-files.md) on the hand-written corpus.</summary>
public sealed class RunFileReaderTests
{
    private static string SmallNight => Path.Combine(RepoPaths.Corpus, "nights", "small-night");

    [Test]
    public void A_night_folder_gives_one_run_per_toml_file_in_name_order()
    {
        NightSettings night = RunFileReader.ReadNight(SmallNight);
        Assert.That(night.Runs.Select(r => r.Name), Is.EqualTo(new[] { "run-a", "run-b" }));
        Assert.That(night.Runs.All(r => r.NightFile == Path.Combine(SmallNight, "night.toml")));
    }

    [Test]
    public void A_run_inherits_the_nights_keys_and_overrides_them_key_by_key()
    {
        NightSettings night = RunFileReader.ReadNight(SmallNight);
        RunSettings a = night.Runs[0], b = night.Runs[1];
        // Inherited unchanged by run-a.
        Assert.That(a.Theory.Sphere.Radius.Value, Is.EqualTo(148.7e-6).Within(1e-12).Percent);
        Assert.That(a.Instrument.Amplitude.Value, Is.EqualTo(1.0e-9).Within(1e-12).Percent);
        Assert.That(a.Protocol, Is.EqualTo(Protocol.VoltageSteps));
        // Overridden by run-b; the rest of each table still comes from night.toml.
        Assert.That(b.Theory.Sphere.Radius.Value, Is.EqualTo(151.2e-6).Within(1e-12).Percent);
        Assert.That(b.Theory.Sphere.Radius.Sigma, Is.EqualTo(0.3e-6).Within(1e-12).Percent);
        Assert.That(b.Instrument.Amplitude.Value, Is.EqualTo(2.0e-9).Within(1e-12).Percent);
        Assert.That(b.Instrument.ReferenceBeyond!.Value.Value, Is.EqualTo(2500e-9).Within(1e-12).Percent);
        Assert.That(b.Instrument.SpringConstant, Is.Null, "spring_constant = \"auto\" from night.toml");
        Assert.That(b.Protocol, Is.EqualTo(Protocol.DistanceRamps));
        Assert.That(b.BinWidth!.Value.Value, Is.EqualTo(2e-9).Within(1e-12).Percent);
        Assert.That(b.Settle, Is.Null);
        // Column entries are replaced whole; unmentioned ones are kept.
        Assert.That(b.Columns.Time.Name, Is.EqualTo("time ms"));
        Assert.That(b.Columns.Time.Unit.ToSi, Is.EqualTo(1e-3));
        Assert.That(b.Columns.Frequency!.Unit.Symbol, Is.EqualTo("kHz"));
        Assert.That(b.Columns.Piezo.Name, Is.EqualTo("zp"));
        Assert.That(b.Theory.Theories.Select(t => t.Name), Is.EqualTo(new[] { "Drude", "plasma" }));
    }

    [Test]
    public void Relative_paths_are_resolved_against_the_files_folder()
    {
        NightSettings night = RunFileReader.ReadNight(SmallNight);
        Assert.That(night.Runs[0].DataFile, Is.EqualTo(Path.Combine(SmallNight, "run-a.csv")));
        Assert.That(File.Exists(night.Runs[1].DataFile));
    }

    [Test]
    public void A_single_run_file_is_read_with_the_night_toml_beside_it()
    {
        NightSettings night = RunFileReader.ReadNight(Path.Combine(SmallNight, "run-b.toml"));
        Assert.That(night.Runs, Has.Count.EqualTo(1));
        Assert.That(night.Runs[0].Theory.Surfaces.Temperature.Value, Is.EqualTo(295.0));
    }

    [Test]
    public void Materials_are_converted_to_SI_angular_frequencies()
    {
        RunSettings a = RunFileReader.ReadNight(SmallNight).Runs[0];
        double eV = Codata2018.ElectronVoltAngularFrequency.Value; // rad/s per eV, CODATA 2018 e/hbar
        MaterialSettings drude = a.Theory.Materials["gold-drude"];
        Assert.That(drude.Model, Is.EqualTo(MaterialModel.Drude));
        Assert.That(drude.PlasmaFrequency!.Value.Value, Is.EqualTo(9.0 * eV).Within(1e-12).Percent);
        Assert.That(drude.Damping!.Value.Sigma, Is.EqualTo(0.005 * eV).Within(1e-12).Percent);
        MaterialSettings gp = a.Theory.Materials["gold-gp"];
        Assert.That(gp.Oscillators, Has.Count.EqualTo(2));
        Assert.That(gp.Oscillators[0].Strength.Value, Is.EqualTo(7.1 * eV * eV).Within(1e-12).Percent);
        Assert.That(gp.Oscillators[1].Frequency.Value, Is.EqualTo(4.2 * eV).Within(1e-12).Percent);
    }

    [Test]
    public void Settings_are_immutable_records()
    {
        RunSettings a = RunFileReader.ReadNight(SmallNight).Runs[0];
        Assert.That(typeof(RunSettings).GetProperties().All(p => p.SetMethod is null || p.SetMethod.ReturnParameter.GetRequiredCustomModifiers().Any(m => m.Name == "IsExternalInit")));
        RunSettings changed = a with { Name = "other" };
        Assert.That(a.Name, Is.EqualTo("run-a"));
        Assert.That(changed.Name, Is.EqualTo("other"));
    }

    [TestCaseSource(typeof(MalformedRunFiles), nameof(MalformedRunFiles.Cases))]
    public void Each_malformed_run_file_gets_its_exact_messages(string file, string[] expected)
    {
        var e = Assert.Throws<InputException>(() => NightCheck.Run(file))!;
        Assert.That(e.Problems.Select(p => p.ToString()), Is.EqualTo(expected));
    }

    [Test]
    public void The_malformed_corpus_has_at_least_twenty_files_each_with_an_expectation()
    {
        var files = Directory.GetFiles(MalformedRunFiles.Folder, "*.toml").Select(Path.GetFileName).ToHashSet();
        var covered = MalformedRunFiles.Cases().Select(c => Path.GetFileName((string)c.Arguments[0]!)).ToHashSet();
        Assert.That(files, Has.Count.GreaterThanOrEqualTo(20));
        Assert.That(covered, Is.EquivalentTo(files));
    }

    [Test]
    public void A_theory_only_file_may_be_at_zero_kelvin()
    {
        string folder = Path.Combine(Path.GetTempPath(), "forcefit-tests", Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(folder);
        string file = Path.Combine(folder, "ideal.toml");
        File.WriteAllText(file, """
            [sphere]
            radius = "100 um"
            [surfaces]
            temperature = "0 K"
            [materials.au]
            model = "plasma"
            plasma_frequency = "9 eV"
            [[theory]]
            name = "plasma at 0 K"
            sphere = "au"
            plate = "au"
            """);
        TheoryInputs inputs = RunFileReader.ReadTheoryInputs(file);
        Assert.That(inputs.Surfaces.Temperature.Value, Is.Zero);
        Assert.That(inputs.Theories.Single().Name, Is.EqualTo("plasma at 0 K"));
        Directory.Delete(folder, true);
    }

    [Test]
    public void Nearest_key_suggestion_uses_edit_distance()
    {
        // Levenshtein distances from the definition: kitten -> sitting is 3 (a textbook example).
        Assert.That(Suggest.Distance("kitten", "sitting"), Is.EqualTo(3));
        Assert.That(Suggest.Nearest("temprature", ["temperature", "sphere_roughness"]), Is.EqualTo("temperature"));
        Assert.That(Suggest.Nearest("xyz", ["temperature", "radius"]), Is.Null);
    }
}
