using System.Net;
using System.Net.Sockets;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// Outgoing HTTP to addresses owners choose (item images, webhooks) without server-side request forgery: the
/// check runs when the connection is made (<see cref="SocketsHttpHandler.ConnectCallback"/>): the host is resolved,
/// every address it resolves to is checked, and the socket connects to a checked address, so a name that resolves
/// to a public address for one lookup and a private one for the next (DNS rebinding) cannot pass. No redirects, no
/// proxy (a proxy would make the connection for us, unchecked), no cookies.
/// </summary>
public static class NetworkGuard
{
    /// <param name="allowPrivateNetworks">Also connect to loopback, private and link-local addresses (single-host and test setups).</param>
    public static SocketsHttpHandler Handler(bool allowPrivateNetworks, TimeSpan connectTimeout) => new()
    {
        AllowAutoRedirect = false,
        UseProxy = false,
        UseCookies = false,
        AutomaticDecompression = DecompressionMethods.None,
        ConnectTimeout = connectTimeout,
        // Pooled connections were checked when made; a bounded lifetime makes the name be resolved (and checked) again.
        PooledConnectionLifetime = TimeSpan.FromMinutes(2),
        ConnectCallback = (context, ct) => ConnectAsync(context.DnsEndPoint, allowPrivateNetworks, ct),
    };

    public static async ValueTask<Stream> ConnectAsync(DnsEndPoint endPoint, bool allowPrivateNetworks, CancellationToken ct)
    {
        var host = endPoint.Host.Trim('[', ']');
        var addresses = IPAddress.TryParse(host, out var literal) ? [literal] : await Dns.GetHostAddressesAsync(host, ct);
        if (addresses.Length == 0) throw new SocketException((int)SocketError.HostNotFound);
        if (!allowPrivateNetworks && addresses.FirstOrDefault(a => !IsPublic(a)) is { } refused)
            throw new RefusedAddressException(host, refused);

        SocketException? last = null;
        foreach (var address in addresses)
        {
            var socket = new Socket(address.AddressFamily, SocketType.Stream, ProtocolType.Tcp) { NoDelay = true };
            try
            {
                await socket.ConnectAsync(new IPEndPoint(address, endPoint.Port), ct);
                return new NetworkStream(socket, ownsSocket: true);
            }
            catch (SocketException e)
            {
                socket.Dispose();
                last = e;
            }
            catch
            {
                socket.Dispose();
                throw;
            }
        }
        throw last!;
    }

    /// <summary>
    /// False for addresses that reach this host or its private networks: unspecified, loopback, private (RFC 1918),
    /// shared (RFC 6598), link-local (169.254/16, fe80::/10), unique-local (fc00::/7), multicast, reserved and
    /// broadcast; IPv4 inside IPv6 (mapped, compatible, NAT64 64:ff9b::/96, 6to4 2002::/16) is judged as the IPv4
    /// address it carries. Ranges from the IANA special-purpose address registries (RFC 6890), from memory.
    /// </summary>
    public static bool IsPublic(IPAddress address)
    {
        if (address.AddressFamily == AddressFamily.InterNetworkV6)
        {
            if (address.IsIPv4MappedToIPv6) return IsPublic(address.MapToIPv4());
            var b = address.GetAddressBytes();
            if (b.Take(12).All(x => x == 0)) return b[12] != 0 && IsPublic(new IPAddress(b[12..16])); // ::, ::1 and IPv4-compatible
            if (b[0] == 0x00 && b[1] == 0x64 && b[2] == 0xff && b[3] == 0x9b && b.Skip(4).Take(8).All(x => x == 0))
                return IsPublic(new IPAddress(b[12..16]));                                     // NAT64 64:ff9b::/96
            if (b[0] == 0x20 && b[1] == 0x02) return IsPublic(new IPAddress(b[2..6]));        // 6to4 2002::/16
            if ((b[0] & 0xfe) == 0xfc) return false;                                          // unique-local fc00::/7
            if (b[0] == 0xfe && (b[1] & 0xc0) is 0x80 or 0xc0) return false;                  // link-local fe80::/10, site-local fec0::/10
            if (b[0] == 0xff) return false;                                                   // multicast
            return true;
        }

        var v4 = address.GetAddressBytes();
        return v4[0] switch
        {
            0 or 10 or 127 => false,                                     // "this network", private, loopback
            100 when (v4[1] & 0xc0) == 64 => false,                      // shared address space 100.64/10
            169 when v4[1] == 254 => false,                              // link-local (cloud metadata lives here)
            172 when (v4[1] & 0xf0) == 16 => false,                      // private 172.16/12
            192 when v4[1] == 168 => false,                              // private 192.168/16
            192 when v4[1] == 0 && v4[2] is 0 or 2 => false,             // IETF protocol assignments, documentation
            198 when (v4[1] & 0xfe) == 18 => false,                      // benchmarking 198.18/15
            >= 224 => false,                                             // multicast, reserved, broadcast
            _ => true,
        };
    }
}

/// <summary>The guard refused to connect: the host resolved to an address on a private network (or this host).</summary>
public sealed class RefusedAddressException(string host, IPAddress address)
    : IOException($"'{host}' resolves to {address}, which is not a public address.")
{
    public string Host { get; } = host;

    /// <summary>The refusal behind an HTTP client's exception, if that is what it was.</summary>
    public static RefusedAddressException? In(Exception e)
    {
        for (Exception? inner = e; inner is not null; inner = inner.InnerException)
        {
            if (inner is RefusedAddressException refused) return refused;
        }
        return null;
    }
}
