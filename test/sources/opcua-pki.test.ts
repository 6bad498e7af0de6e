// The PKI folder helpers the CLI builds `millwarden pki list|trust` on: our own certificate
// is created once and kept, server certificates are listed with their thumbprints and
// trusted explicitly. Thumbprints are checked against an independent SHA-1 of the DER form
// (OPC UA Part 6: the thumbprint is the SHA-1 hash of the DER-encoded certificate).
import { X509Certificate, createHash } from "node:crypto";
import { copyFileSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { ensureOwnCertificate, inspectCertificate, listServerCertificates, trustServerCertificate, type OwnCertificate } from "../../src/sources/opcua-pki.js";

let dir: string;
let own: OwnCertificate;
let other: OwnCertificate;
beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), "mw-pki-"));
  // Two applications: "ours" and one standing in for a server.
  [own, other] = await Promise.all([ensureOwnCertificate(join(dir, "client")), ensureOwnCertificate(join(dir, "server"))]);
}, 60_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const sha1OfDer = (file: string) => createHash("sha1").update(new X509Certificate(readFileSync(file)).raw).digest("hex");

describe("ensureOwnCertificate", () => {
  it("creates a certificate with an application URI once, and keeps it", async () => {
    expect(own.certificateFile).toBe(join(dir, "client", "own", "certs", "client_certificate.pem"));
    expect(own.applicationUri).toMatch(/^urn:.+:millwarden$/);
    expect(own.info).toMatchObject({ status: "own", validNow: true, thumbprint: sha1OfDer(own.certificateFile) });
    expect(readFileSync(own.privateKeyFile, "utf8")).toMatch(/BEGIN (RSA )?PRIVATE KEY/);
    const again = await ensureOwnCertificate(join(dir, "client"));
    expect(again.info.thumbprint).toBe(own.info.thumbprint);
  });
});

describe("listServerCertificates and trustServerCertificate", () => {
  it("lists a refused certificate, trusts it on request, and lists it as trusted", async () => {
    const pki = join(dir, "client");
    expect(listServerCertificates(pki)).toEqual([]);
    // What the client does when it meets an unknown server: a copy lands in rejected/.
    mkdirSync(join(pki, "rejected"), { recursive: true });
    const rejectedCopy = join(pki, "rejected", "server.pem");
    copyFileSync(other.certificateFile, rejectedCopy);
    const listed = listServerCertificates(pki);
    expect(listed).toHaveLength(1);
    expect(listed[0]).toMatchObject({ status: "rejected", file: rejectedCopy, thumbprint: sha1OfDer(other.certificateFile), applicationUri: other.applicationUri });

    const trusted = await trustServerCertificate(pki, rejectedCopy);
    expect(trusted).toMatchObject({ status: "trusted", thumbprint: sha1OfDer(other.certificateFile) });
    expect(trusted.file.startsWith(join(pki, "trusted", "certs"))).toBe(true);
    const after = listServerCertificates(pki);
    expect(after.map((c) => c.status)).toEqual(["trusted"]);
  });

  it("refuses our own certificate and files that are not certificates, saying what was found", async () => {
    const pki = join(dir, "client");
    await expect(trustServerCertificate(pki, own.certificateFile)).rejects.toThrow(/this is millwarden's own certificate, expected a server's/);
    const junk = join(dir, "junk.pem");
    writeFileSync(junk, "-----BEGIN CERTIFICATE-----\nnot base64 at all\n-----END CERTIFICATE-----\n");
    await expect(trustServerCertificate(pki, junk)).rejects.toThrow(/junk\.pem: expected an X\.509 certificate in PEM or DER form, found something else/);
    await expect(trustServerCertificate(pki, join(dir, "missing.der"))).rejects.toThrow(/missing\.der: cannot read the file/);
  });

  it("reads DER as well as PEM, and tells an expired certificate", () => {
    const der = join(dir, "server.der");
    writeFileSync(der, new X509Certificate(readFileSync(other.certificateFile)).raw);
    const info = inspectCertificate(der, "rejected", Date.UTC(2100, 0, 1));
    expect(info.thumbprint).toBe(sha1OfDer(other.certificateFile));
    expect(info.validNow).toBe(false);
  });
});
