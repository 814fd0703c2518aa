"""What people read: the plain-text report, the PDF memo, the register summary, their templates and charts."""
