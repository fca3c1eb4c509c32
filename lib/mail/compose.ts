// Small helpers for composing e-mail bodies (HTML and plain text carry the same content).

/** Escapes text for HTML element content and attribute values (& < > " '). */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}
