using SiloWatch.Service.StatusPage;

namespace SiloWatch.Browser.Tests;

/// <summary>The password hashes of the status page's users (PBKDF2-HMAC-SHA-256, RFC 8018).</summary>
public sealed class OperatorPasswordsTests
{
    // Made with the README's recipe, Python's hashlib.pbkdf2_hmac('sha256', b'correct horse battery', bytes(range(16)), 600000):
    // an independent implementation of the same standard.
    private const string FromPython = "pbkdf2-sha256$600000$AAECAwQFBgcICQoLDA0ODw==$uwbIwLHdW/1OQPTil6LQ5k2n75S0uOwgmJAhyLQVNq0=";

    [Fact]
    public void AHashMadeWithTheReadmeRecipeVerifiesItsPasswordAndNoOther()
    {
        Assert.True(OperatorPasswords.Verify("correct horse battery", FromPython));
        Assert.False(OperatorPasswords.Verify("correct horse batterY", FromPython));
        Assert.False(OperatorPasswords.Verify("", FromPython));
    }

    [Fact]
    public void AFreshHashVerifiesAndTwoHashesOfOnePasswordDiffer()
    {
        var a = OperatorPasswords.Hash("s3cret-enough", iterations: 20_000);
        var b = OperatorPasswords.Hash("s3cret-enough", iterations: 20_000);
        Assert.NotEqual(a, b); // random salt
        Assert.True(OperatorPasswords.Verify("s3cret-enough", a));
        Assert.True(OperatorPasswords.Verify("s3cret-enough", b));
    }

    [Theory]
    [InlineData("s3cret-enough")] // a password pasted in clear
    [InlineData("pbkdf2-sha256$100$AAECAwQFBgcICQoLDA0ODw==$uwbIwLHdW/1OQPTil6LQ5k2n75S0uOwgmJAhyLQVNq0=")] // too few iterations
    [InlineData("pbkdf2-sha1$600000$AAECAwQFBgcICQoLDA0ODw==$uwbIwLHdW/1OQPTil6LQ5k2n75S0uOwgmJAhyLQVNq0=")] // another scheme
    [InlineData("pbkdf2-sha256$600000$not base64$uwbIwLHdW/1OQPTil6LQ5k2n75S0uOwgmJAhyLQVNq0=")]
    public void AnythingButAWellFormedHashIsRefused(string stored)
    {
        Assert.False(OperatorPasswords.IsWellFormed(stored));
        Assert.False(OperatorPasswords.Verify("s3cret-enough", stored));
    }

    [Fact]
    public void ATokenIsStoredAsTheHexOfItsSha256()
    {
        // SHA-256("abc") from FIPS 180-2, appendix B.1 [V].
        Assert.Equal("ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad", OperatorPasswords.TokenHash("abc"));
    }
}
