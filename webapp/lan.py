"""The laptop's own certificate authority and the HTTPS certificate it issues for the home network.

A phone only registers the page's service worker in a secure context, so on the home network
Rondo speaks HTTPS with a server certificate signed by a CA made on this laptop; the phone
installs that CA once. The CA key is written with mode 0600 and never served.
"""

from __future__ import annotations

import datetime as dt
import ipaddress
import json
import os
import re
import shutil
import socket
import ssl
import subprocess
from dataclasses import dataclass
from pathlib import Path

from cryptography import x509
from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import ec
from cryptography.x509.oid import ExtendedKeyUsageOID, NameOID

__all__ = [
    "LanFiles",
    "CertificateSet",
    "local_interfaces",
    "host_names",
    "prepare",
    "load_ca",
    "ca_bytes",
    "ssl_context",
    "fingerprint_sha256",
    "permitted",
    "SERVER_VALIDITY_DAYS",
    "CA_VALIDITY_DAYS",
    "RENEW_BEFORE_DAYS",
    "PRIVATE_NETWORKS",
]

Address = ipaddress.IPv4Address | ipaddress.IPv6Address
Interface = ipaddress.IPv4Interface | ipaddress.IPv6Interface

# Phones refuse TLS server certificates valid for more than 825 days (Apple's rule for
# certificates issued since 2019, from memory of the platform's trust notes).
SERVER_VALIDITY_DAYS = 825
# A root on the phone is not bound by that rule; ten years spares re-installing it.
CA_VALIDITY_DAYS = 3650
RENEW_BEFORE_DAYS = 30  # re-issue this long before expiry (common practice, no source)
CLOCK_SKEW = dt.timedelta(hours=1)  # a phone's clock may run a little behind (common practice)

# What the CA may vouch for (RFC 5280 §4.2.1.10 name constraints): home-network ranges only,
# so a stolen CA key could not impersonate any public site on a phone that trusts it.
PRIVATE_NETWORKS = tuple(ipaddress.ip_network(n) for n in (
    "10.0.0.0/8", "172.16.0.0/12", "192.168.0.0/16",  # RFC 1918 §3
    "100.64.0.0/10",  # RFC 6598 shared address space (carrier and overlay networks)
    "127.0.0.0/8", "::1/128",  # loopback, RFC 1122 §3.2.1.3 and RFC 4291 §2.5.3
    "fc00::/7",  # RFC 4193 unique local IPv6
))
# A non-private network of this laptop joins the constraints only if it is no wider than this.
_WIDEST_PREFIX = {4: 16, 6: 48}
_LABEL = re.compile(r"^(?!-)[A-Za-z0-9-]{1,63}(?<!-)$")  # RFC 1123 §2.1 host name label


@dataclass(frozen=True)
class LanFiles:
    """Where the CA and the server certificate live inside the data folder."""

    directory: Path

    @property
    def ca_cert(self) -> Path:
        return self.directory / "ca-cert.pem"

    @property
    def ca_key(self) -> Path:
        return self.directory / "ca-key.pem"

    @property
    def server_cert(self) -> Path:
        return self.directory / "server-cert.pem"

    @property
    def server_key(self) -> Path:
        return self.directory / "server-key.pem"


@dataclass(frozen=True)
class CertificateSet:
    """The certificates in force and what ``prepare`` had to do to get them."""

    files: LanFiles
    ca: x509.Certificate
    server: x509.Certificate
    addresses: tuple[Address, ...]  # in the server certificate, loopback included
    names: tuple[str, ...]
    made_ca: bool
    issued_server: bool
    left_out: tuple[Address, ...]  # this laptop's addresses the CA may not vouch for


def local_interfaces() -> list[Interface]:
    """This laptop's addresses with their networks: ``ip -j addr`` where it exists, else the
    resolver's answer for the host name; loopback always; link-local never (it changes)."""
    found: list[Interface] = [ipaddress.ip_interface("127.0.0.1/8"),
                              ipaddress.ip_interface("::1/128")]
    found += _from_ip_command()
    found += _from_resolver()
    unique: dict[Address, Interface] = {}
    for iface in found:
        if iface.ip.is_link_local or iface.ip.is_unspecified or iface.ip.is_multicast:
            continue
        unique.setdefault(iface.ip, iface)
    return list(unique.values())


def _from_ip_command() -> list[Interface]:
    ip = shutil.which("ip")
    if ip is None:
        return []
    try:
        done = subprocess.run([ip, "-j", "addr"], capture_output=True, text=True, timeout=5,
                              check=True)
        links = json.loads(done.stdout)
    except (OSError, subprocess.SubprocessError, ValueError):
        return []
    out = []
    for link in links if isinstance(links, list) else []:
        for info in link.get("addr_info", []) if isinstance(link, dict) else []:
            try:
                out.append(ipaddress.ip_interface(f"{info['local']}/{info['prefixlen']}"))
            except (KeyError, TypeError, ValueError):
                continue
    return out


def _from_resolver() -> list[Interface]:
    try:
        answers = socket.getaddrinfo(socket.gethostname(), None)
    except OSError:
        return []
    out = []
    for _family, _type, _proto, _name, sockaddr in answers:
        try:
            out.append(ipaddress.ip_interface(sockaddr[0].split("%")[0]))
        except ValueError:
            continue
    return out


def host_names() -> list[str]:
    """``localhost``, this laptop's host name and its ``.local`` (mDNS) form, if valid names."""
    names = ["localhost"]
    host = socket.gethostname().strip().rstrip(".").lower()
    if host and all(_LABEL.match(label) for label in host.split(".")):
        names.append(host)
        if "." not in host:
            names.append(f"{host}.local")
    return list(dict.fromkeys(names))


def permitted(ca: x509.Certificate, address: Address) -> bool:
    """Whether the CA's name constraints allow a certificate for ``address``."""
    networks = _permitted_networks(ca)
    return networks is None or any(address in net for net in networks)


def _permitted_networks(ca: x509.Certificate):
    try:
        constraints = ca.extensions.get_extension_for_class(x509.NameConstraints).value
    except x509.ExtensionNotFound:
        return None
    return [g.value for g in constraints.permitted_subtrees or ()
            if isinstance(g, x509.IPAddress)]


def _permitted_names(ca: x509.Certificate, names: list[str]) -> list[str]:
    try:
        constraints = ca.extensions.get_extension_for_class(x509.NameConstraints).value
    except x509.ExtensionNotFound:
        return names
    allowed = [g.value.lower() for g in constraints.permitted_subtrees or ()
               if isinstance(g, x509.DNSName)]
    return [n for n in names if any(n == a or n.endswith("." + a) for a in allowed)]


def prepare(directory: str | os.PathLike, *, interfaces: list[Interface] | None = None,
            names: list[str] | None = None, now: dt.datetime | None = None) -> CertificateSet:
    """Load or make the CA, then (re-)issue the server certificate if it is missing, signed by
    another CA, near its end, or if this laptop's addresses or names changed."""
    files = LanFiles(Path(directory))
    interfaces = local_interfaces() if interfaces is None else interfaces
    names = host_names() if names is None else names
    now = now or dt.datetime.now(dt.UTC)
    _private_dir(files.directory)
    ca, ca_key = _load_pair(files.ca_cert, files.ca_key)
    made_ca = ca is None or ca.not_valid_after_utc - now < dt.timedelta(days=RENEW_BEFORE_DAYS)
    if made_ca:
        ca, ca_key = _make_ca(interfaces, names, now)
        _write(files.ca_key, _private_pem(ca_key), private=True)
        _write(files.ca_cert, ca.public_bytes(serialization.Encoding.PEM))
    wanted_ips = sorted({i.ip for i in interfaces if permitted(ca, i.ip)},
                        key=lambda a: (a.version, int(a)))
    left_out = tuple(sorted({i.ip for i in interfaces} - set(wanted_ips),
                            key=lambda a: (a.version, int(a))))
    wanted_names = _permitted_names(ca, names)
    server, _key = _load_pair(files.server_cert, files.server_key)
    issue = made_ca or server is None or not _current(server, ca, wanted_ips, wanted_names, now)
    if issue:
        server, server_key = _issue_server(ca, ca_key, wanted_ips, wanted_names, now)
        _write(files.server_key, _private_pem(server_key), private=True)
        _write(files.server_cert, server.public_bytes(serialization.Encoding.PEM))
    return CertificateSet(files, ca, server, tuple(wanted_ips), tuple(wanted_names), made_ca,
                          issue, left_out)


def load_ca(directory: str | os.PathLike) -> x509.Certificate:
    """The CA certificate (never its key) for the phone to download."""
    return x509.load_pem_x509_certificate(LanFiles(Path(directory)).ca_cert.read_bytes())


def ca_bytes(directory: str | os.PathLike, *, der: bool) -> bytes:
    """The CA certificate as DER (what phones install) or PEM text."""
    encoding = serialization.Encoding.DER if der else serialization.Encoding.PEM
    return load_ca(directory).public_bytes(encoding)


def ssl_context(files: LanFiles, context: ssl.SSLContext | None = None) -> ssl.SSLContext:
    """A TLS 1.2+ server context with the server certificate; pass ``context`` to reload it
    (new connections get the new certificate)."""
    if context is None:
        context = ssl.SSLContext(ssl.PROTOCOL_TLS_SERVER)
        context.minimum_version = ssl.TLSVersion.TLSv1_2
    context.load_cert_chain(str(files.server_cert), str(files.server_key))
    return context


def fingerprint_sha256(cert: x509.Certificate) -> str:
    """``AB:CD:...``: the SHA-256 fingerprint phones show in a certificate's details."""
    return cert.fingerprint(hashes.SHA256()).hex(":").upper()


def _current(server: x509.Certificate, ca: x509.Certificate, ips: list[Address],
             names: list[str], now: dt.datetime) -> bool:
    if server.issuer != ca.subject:
        return False
    try:
        ca.public_key().verify(server.signature, server.tbs_certificate_bytes,
                               ec.ECDSA(server.signature_hash_algorithm))
    except (InvalidSignature, TypeError, ValueError):
        return False
    if server.not_valid_after_utc - now < dt.timedelta(days=RENEW_BEFORE_DAYS):
        return False
    try:
        san = server.extensions.get_extension_for_class(x509.SubjectAlternativeName).value
    except x509.ExtensionNotFound:
        return False
    return (set(san.get_values_for_type(x509.IPAddress)) == set(ips)
            and set(san.get_values_for_type(x509.DNSName)) == set(names))


def _make_ca(interfaces: list[Interface], names: list[str], now: dt.datetime):
    key = ec.generate_private_key(ec.SECP256R1())  # P-256 (FIPS 186-4 §D.1.2.3)
    tag = os.urandom(4).hex()  # tells this laptop's CA from an earlier one on the phone
    subject = x509.Name([
        x509.NameAttribute(NameOID.COMMON_NAME, f"Rondo laptop CA {tag}"),
        x509.NameAttribute(NameOID.ORGANIZATION_NAME, "Rondo, this laptop only"),
    ])
    networks = list(PRIVATE_NETWORKS)
    for iface in interfaces:
        net = iface.network
        covered = any(iface.ip in n for n in networks)
        if not covered and net.prefixlen >= _WIDEST_PREFIX[net.version]:
            networks.append(net)
    constraints = x509.NameConstraints(
        permitted_subtrees=[x509.IPAddress(n) for n in networks]
        + [x509.DNSName(n) for n in names], excluded_subtrees=None)
    cert = (
        x509.CertificateBuilder()
        .subject_name(subject).issuer_name(subject)
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - CLOCK_SKEW)
        .not_valid_after(now + dt.timedelta(days=CA_VALIDITY_DAYS))
        # RFC 5280 §4.2.1.9: a CA certificate, no CA below it.
        .add_extension(x509.BasicConstraints(ca=True, path_length=0), critical=True)
        # RFC 5280 §4.2.1.3: signs certificates (and revocation lists), nothing else.
        .add_extension(x509.KeyUsage(
            digital_signature=False, content_commitment=False, key_encipherment=False,
            data_encipherment=False, key_agreement=False, key_cert_sign=True, crl_sign=True,
            encipher_only=False, decipher_only=False), critical=True)
        .add_extension(constraints, critical=True)  # RFC 5280 §4.2.1.10: MUST be critical
        .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()),
                       critical=False)
        .sign(key, hashes.SHA256())
    )
    return cert, key


def _issue_server(ca: x509.Certificate, ca_key, ips: list[Address], names: list[str],
                  now: dt.datetime):
    key = ec.generate_private_key(ec.SECP256R1())
    host = next((n for n in names if n != "localhost"), "localhost")
    not_after = min(now + dt.timedelta(days=SERVER_VALIDITY_DAYS) - CLOCK_SKEW,
                    ca.not_valid_after_utc)
    san = [x509.DNSName(n) for n in names] + [x509.IPAddress(a) for a in ips]
    cert = (
        x509.CertificateBuilder()
        .subject_name(x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, f"Rondo on {host}")]))
        .issuer_name(ca.subject)
        .public_key(key.public_key())
        .serial_number(x509.random_serial_number())
        .not_valid_before(now - CLOCK_SKEW)
        .not_valid_after(not_after)
        .add_extension(x509.BasicConstraints(ca=False, path_length=None), critical=True)
        .add_extension(x509.KeyUsage(
            digital_signature=True, content_commitment=False, key_encipherment=False,
            data_encipherment=False, key_agreement=False, key_cert_sign=False, crl_sign=False,
            encipher_only=False, decipher_only=False), critical=True)
        .add_extension(x509.ExtendedKeyUsage([ExtendedKeyUsageOID.SERVER_AUTH]), critical=False)
        .add_extension(x509.SubjectAlternativeName(san), critical=False)
        .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()),
                       critical=False)
        .add_extension(x509.AuthorityKeyIdentifier.from_issuer_public_key(ca.public_key()),
                       critical=False)
        .sign(ca_key, hashes.SHA256())
    )
    return cert, key


def _load_pair(cert_path: Path, key_path: Path):
    try:
        cert = x509.load_pem_x509_certificate(cert_path.read_bytes())
        key = serialization.load_pem_private_key(key_path.read_bytes(), password=None)
    except (OSError, ValueError, TypeError):
        return None, None
    if cert.public_key().public_numbers() != key.public_key().public_numbers():
        return None, None
    return cert, key


def _private_pem(key) -> bytes:
    return key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
                             serialization.NoEncryption())


def _private_dir(directory: Path) -> None:
    directory.mkdir(parents=True, exist_ok=True)
    os.chmod(directory, 0o700)


def _write(path: Path, data: bytes, *, private: bool = False) -> None:
    """Replace ``path`` whole; a private file is created 0600, never readable in between."""
    tmp = path.with_name(path.name + ".new")
    mode = 0o600 if private else 0o644
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, mode)
    os.fchmod(fd, mode)  # an older leftover file keeps its mode otherwise
    with os.fdopen(fd, "wb") as out:
        out.write(data)
        out.flush()
        os.fsync(out.fileno())
    os.replace(tmp, path)
