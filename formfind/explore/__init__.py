"""The live exploration page (`formfind explore`): a small local server and a page in plain HTML, CSS, JS
and SVG. It computes no mechanics of its own: every answer is the library's find, analyse and check of
the case file with the page's settings applied to its table (`settings`), validated by the same rules
as a case file (`answer`), served by `server`."""
