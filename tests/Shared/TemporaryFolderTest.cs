namespace ForceFit.Tests.Shared;

/// <summary>A test class that gets a fresh, empty folder for every test and removes it afterwards.</summary>
public abstract class TemporaryFolderTest
{
    /// <summary>The folder of the current test.</summary>
    protected string Folder { get; private set; } = "";

    /// <summary>Creates the folder.</summary>
    [SetUp]
    public void MakeFolder()
    {
        Folder = Path.Combine(Path.GetTempPath(), "forcefit-tests", Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(Folder);
    }

    /// <summary>Removes the folder and everything in it.</summary>
    [TearDown]
    public void RemoveFolder()
    {
        if (Directory.Exists(Folder)) Directory.Delete(Folder, recursive: true);
    }
}
