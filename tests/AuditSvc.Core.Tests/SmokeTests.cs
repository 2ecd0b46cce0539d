using AuditSvc.Core.Models;

namespace AuditSvc.Core.Tests;

public class SmokeTests
{
    [Fact]
    public void BoxAt_InputField_IsOnePixel()
    {
        var box = ReceptiveField.Input.BoxAt(3, 4, 10, 10);
        Assert.Equal(new Box(4, 3, 1, 1), box);
    }
}
