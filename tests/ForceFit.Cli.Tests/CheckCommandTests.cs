using ForceFit.Cli;
using ForceFit.Tests.Shared;

namespace ForceFit.Cli.Tests;

/// <summary>`forcefit check` on the hand-written small night and on every malformed run file.</summary>
public sealed class CheckCommandTests
{
    private static (int Exit, string Out, string Err) Run(params string[] args)
    {
        var output = new StringWriter();
        var errors = new StringWriter();
        int exit = Commands.Run(args, output, errors);
        return (exit, output.ToString(), errors.ToString());
    }

    [Test]
    public void Prints_the_resolved_settings_of_a_good_night_and_exits_0()
    {
        string night = Path.Combine(RepoPaths.Corpus, "nights", "small-night");
        var (exit, output, errors) = Run("check", night);
        Assert.That(exit, Is.Zero, errors);
        Assert.That(errors, Is.Empty);
        string[] lines = output.Split('\n');
        Assert.That(lines.Single(l => l.StartsWith("setting ")), Does.Contain("run-a").And.Contain("run-b"));
        // Values from the files, shown in readable units: run-b overrides R and A, inherits T.
        Assert.That(lines.Single(l => l.StartsWith("sphere radius R")), Does.Contain("148.7 ± 0.2 um").And.Contain("151.2 ± 0.3 um"));
        Assert.That(lines.Single(l => l.StartsWith("amplitude A")), Does.Contain("1 ± 0.1 nm").And.Contain("2 ± 0.2 nm"));
        Assert.That(lines.Single(l => l.StartsWith("temperature T")), Does.Contain("295 ± 0.5 K"));
        Assert.That(lines.Single(l => l.StartsWith("column frequency")), Does.Contain("f_pll [Hz]").And.Contain("f_pll [kHz]"));
        Assert.That(lines.Single(l => l.StartsWith("spring constant k")), Does.Contain("auto"));
        Assert.That(output, Does.Contain("gold-gp: GeneralizedPlasma; plasma frequency 8.9 eV"));
        Assert.That(output, Does.Contain("ok: 2 run(s) read"));
    }

    [TestCaseSource(typeof(MalformedRunFiles), nameof(MalformedRunFiles.Cases))]
    public void Exits_1_with_the_message_for_each_malformed_file(string file, string[] expected)
    {
        var (exit, output, errors) = Run("check", file);
        Assert.That(exit, Is.EqualTo(1));
        Assert.That(output, Is.Empty);
        Assert.That(errors.TrimEnd().Split(Environment.NewLine), Is.EqualTo(expected.Select(m => "error: " + m)));
    }

    [TestCase("")]
    [TestCase("check")]
    [TestCase("check a b")]
    [TestCase("frobnicate")]
    public void Wrong_usage_exits_2(string commandLine)
    {
        var (exit, _, errors) = Run(commandLine.Split(' ', StringSplitOptions.RemoveEmptyEntries));
        Assert.That(exit, Is.EqualTo(2));
        Assert.That(errors, Does.Contain("usage"));
    }

    [Test]
    public void A_path_that_does_not_exist_exits_1_naming_it()
    {
        var (exit, _, errors) = Run("check", "/no/such/night");
        Assert.That(exit, Is.EqualTo(1));
        Assert.That(errors.Trim(), Is.EqualTo("error: /no/such/night: no such file or folder"));
    }
}
