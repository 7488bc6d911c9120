package sources

// Temporary stubs; the Markdown and HTML readers replace them.
func parseMarkdown(doc *Document, src []byte, mdx bool) error { return nil }
func parseHTML(doc *Document, src []byte) error               { return nil }
