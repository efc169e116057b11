// Files in and out of the browser, and the text encodings the page uses.
import { el } from './dom.js';

/** Largest file the page reads (need, CSV or project). */
export const MAX_UPLOAD_BYTES = 4 * 1024 * 1024;

/** Offer `text` as a download named `name`. */
export function download(name, text, type) {
  const url = URL.createObjectURL(new Blob([text], { type }));
  const link = el('a', { href: url, download: name });
  document.body.append(link);
  link.click();
  link.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10000);
}

/** The text of a picked file; refuses files over MAX_UPLOAD_BYTES. */
export function readFileText(file) {
  return new Promise((resolve, reject) => {
    if (file.size > MAX_UPLOAD_BYTES) {
      reject(new Error(`${file.name}: ${(file.size / 1048576).toFixed(1)} MB is more than this page takes (${MAX_UPLOAD_BYTES / 1048576} MB)`));
      return;
    }
    const reader = new FileReader();
    reader.onload = () => resolve(String(reader.result));
    reader.onerror = () => reject(new Error(`${file.name}: could not be read`));
    reader.readAsText(file);
  });
}

/** UTF-8 text to base64url (RFC 4648 section 5). */
export function toBase64Url(text) {
  return bytesToBase64Url(new TextEncoder().encode(text));
}

/** Bytes to base64url (RFC 4648 section 5), for the share link. */
export function bytesToBase64Url(bytes) {
  let binary = '';
  for (let i = 0; i < bytes.length; i += 0x8000) binary += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(binary).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
}

/** base64url back to bytes; throws on anything else. */
export function base64UrlToBytes(code) {
  if (!/^[A-Za-z0-9_-]*$/.test(code)) throw new Error('not base64url text');
  const padded = code.replace(/-/g, '+').replace(/_/g, '/') + '==='.slice((code.length + 3) % 4);
  const binary = atob(padded);
  return Uint8Array.from(binary, (c) => c.charCodeAt(0));
}

/** base64url back to UTF-8 text; throws on anything else. */
export function fromBase64Url(code) {
  return new TextDecoder('utf-8', { fatal: true }).decode(base64UrlToBytes(code));
}

/** Standard base64 to bytes (the wasm inside the single file). */
export function base64ToBytes(code) {
  const binary = atob(code);
  const bytes = new Uint8Array(binary.length);
  for (let i = 0; i < binary.length; i += 1) bytes[i] = binary.charCodeAt(i);
  return bytes;
}
