// The OPC UA source's PKI folder: millwarden's application instance certificate and the
// server certificates it trusts or has refused.
//
//   <pkiFolder>/own/certs/client_certificate.pem   ours, created on first run (self-signed)
//   <pkiFolder>/own/private/private_key.pem        its key (never leaves the box)
//   <pkiFolder>/trusted/certs/                     server certificates trusted explicitly
//   <pkiFolder>/rejected/                          server certificates seen and refused
//   <pkiFolder>/issuers/certs/                     CA certificates (for CA-signed servers)
//
// An unknown server certificate is refused and lands in rejected/; a person looks at it
// (`millwarden pki list`: subject, application URI, SHA-1 thumbprint, validity) and
// trusts it (`millwarden pki trust <file>`), which moves it to trusted/.
import { X509Certificate } from "node:crypto";
import { existsSync, readdirSync, readFileSync, statSync } from "node:fs";
import { hostname } from "node:os";
import { join, resolve } from "node:path";
import { OPCUACertificateManager } from "node-opcua";

export const OWN_CERTIFICATE = join("own", "certs", "client_certificate.pem");
export const OWN_PRIVATE_KEY = join("own", "private", "private_key.pem");

export interface CertificateInfo {
  /** Where the file lies. */
  file: string;
  status: "own" | "trusted" | "rejected";
  subject: string;
  /** The application URI from the subjectAltName, when present. */
  applicationUri: string | null;
  /** SHA-1 of the DER form, lowercase hex: what OPC UA tools show as the thumbprint. */
  thumbprint: string;
  notBefore: string;
  notAfter: string;
  /** False once notAfter has passed (or before notBefore), at the time of listing. */
  validNow: boolean;
}

/** A certificate manager on the folder. Unknown peers are refused unless `acceptUnknown`. */
export function openCertificateManager(pkiFolder: string, acceptUnknown = false): OPCUACertificateManager {
  return new OPCUACertificateManager({ rootFolder: resolve(pkiFolder), automaticallyAcceptUnknownCertificate: acceptUnknown });
}

function readCertificate(file: string): X509Certificate {
  let body: Buffer;
  try {
    body = readFileSync(file);
  } catch (e) {
    throw new Error(`certificate ${file}: cannot read the file: ${(e as Error).message}`);
  }
  try {
    return new X509Certificate(body);
  } catch (e) {
    throw new Error(`certificate ${file}: expected an X.509 certificate in PEM or DER form, found something else (${(e as Error).message})`);
  }
}

function describe(cert: X509Certificate, file: string, status: CertificateInfo["status"], nowMs: number): CertificateInfo {
  const uri = /URI:([^,\s]+)/.exec(cert.subjectAltName ?? "");
  const notBefore = new Date(cert.validFrom);
  const notAfter = new Date(cert.validTo);
  return {
    file,
    status,
    subject: cert.subject.replace(/\n/g, ", "),
    applicationUri: uri ? uri[1]! : null,
    thumbprint: cert.fingerprint.replace(/:/g, "").toLowerCase(),
    notBefore: notBefore.toISOString(),
    notAfter: notAfter.toISOString(),
    validNow: notBefore.getTime() <= nowMs && nowMs <= notAfter.getTime(),
  };
}

/** Information about one certificate file (PEM or DER). */
export function inspectCertificate(file: string, status: CertificateInfo["status"] = "rejected", nowMs = Date.now()): CertificateInfo {
  return describe(readCertificate(file), file, status, nowMs);
}

export interface OwnCertificate {
  certificateFile: string;
  privateKeyFile: string;
  applicationUri: string;
  info: CertificateInfo;
}

/**
 * millwarden's own certificate in the folder, created (self-signed, with its key) when
 * missing. Its application URI is read back from the certificate, so a later change of
 * host name does not break the match servers check between the two.
 */
export async function ensureOwnCertificate(pkiFolder: string): Promise<OwnCertificate> {
  const root = resolve(pkiFolder);
  const certificateFile = join(root, OWN_CERTIFICATE);
  const privateKeyFile = join(root, OWN_PRIVATE_KEY);
  if (!existsSync(certificateFile) || statSync(certificateFile).size === 0) {
    const cm = openCertificateManager(root);
    try {
      await cm.initialize(); // creates the folders and the private key
      const host = hostname();
      await cm.createSelfSignedCertificate({
        applicationUri: `urn:${host}:millwarden`,
        dns: [host],
        subject: `/CN=millwarden@${host}/O=millwarden`,
        outputFile: certificateFile,
        startDate: new Date(),
        validity: 5 * 365, // days; renew by deleting the file (servers must then trust the new one)
      });
    } finally {
      await cm.dispose();
    }
  }
  const info = inspectCertificate(certificateFile, "own");
  if (!info.applicationUri) throw new Error(`certificate ${certificateFile}: expected an application URI (URI: in subjectAltName), found none`);
  return { certificateFile, privateKeyFile, applicationUri: info.applicationUri, info };
}

function certificateFiles(folder: string): string[] {
  if (!existsSync(folder)) return [];
  return readdirSync(folder)
    .filter((f) => /\.(pem|der|crt|cer)$/i.test(f))
    .sort()
    .map((f) => join(folder, f));
}

/** Server certificates in the folder: trusted first, then rejected (seen and refused). */
export function listServerCertificates(pkiFolder: string, nowMs = Date.now()): CertificateInfo[] {
  const root = resolve(pkiFolder);
  const out: CertificateInfo[] = [];
  for (const [status, folder] of [["trusted", join(root, "trusted", "certs")], ["rejected", join(root, "rejected")]] as const) {
    for (const file of certificateFiles(folder)) out.push(inspectCertificate(file, status, nowMs));
  }
  return out;
}

/**
 * Trust a server certificate (a file from rejected/, or one handed over by the server's
 * administrator): it is copied into trusted/certs and removed from rejected/. Returns
 * what was trusted, for the person to compare with the server's own display.
 */
export async function trustServerCertificate(pkiFolder: string, certFile: string): Promise<CertificateInfo> {
  const cert = readCertificate(certFile);
  const own = join(resolve(pkiFolder), OWN_CERTIFICATE);
  if (existsSync(own) && readCertificate(own).fingerprint === cert.fingerprint) {
    throw new Error(`certificate ${certFile}: this is millwarden's own certificate, expected a server's`);
  }
  const cm = openCertificateManager(pkiFolder);
  try {
    await cm.initialize();
    await cm.trustCertificate(cert.raw);
  } finally {
    await cm.dispose();
  }
  const thumbprint = cert.fingerprint.replace(/:/g, "").toLowerCase();
  const trusted = listServerCertificates(pkiFolder).find((c) => c.status === "trusted" && c.thumbprint === thumbprint);
  if (!trusted) throw new Error(`certificate ${certFile}: not found under trusted/certs after trusting it (check the folder's permissions)`);
  return trusted;
}
