# Writes the manual page figura.1 from the program's own help texts
# (`figura --help` and `figura COMMAND --help`, the same text that
# tests/e2e/help_docs_e2e_test.cpp holds against docs/cli.md), so the page
# cannot drift from the program. Run after the figura binary is linked:
#   cmake -DFIGURA=path/to/figura -DOUT=path/to/figura.1 -P tools/man_page.cmake
# The help's blocks are kept as they are (no-fill), with roff's special
# characters escaped.
if(NOT FIGURA OR NOT OUT)
  message(FATAL_ERROR "man_page.cmake: set -DFIGURA=<binary> and -DOUT=<figura.1>")
endif()

# Escapes text for roff: backslashes, and a leading '.' or '\'' that would
# read as a request.
function(roff_escape text out_var)
  string(REPLACE "\\" "\\e" text "${text}")
  string(REPLACE "-" "\\-" text "${text}")
  string(REGEX REPLACE "(^|\n)([.'])" "\\1\\\\&\\2" text "${text}")
  set(${out_var} "${text}" PARENT_SCOPE)
endfunction()

function(run_help out_var)
  execute_process(COMMAND "${FIGURA}" ${ARGN} OUTPUT_VARIABLE help RESULT_VARIABLE rc)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "man_page.cmake: ${FIGURA} ${ARGN} exited with ${rc}")
  endif()
  set(${out_var} "${help}" PARENT_SCOPE)
endfunction()

run_help(top --help)
execute_process(COMMAND "${FIGURA}" --version OUTPUT_VARIABLE version
                OUTPUT_STRIP_TRAILING_WHITESPACE)
string(REGEX REPLACE "^figura " "" version "${version}")

# The command names: the lines "  NAME   summary" under "commands:".
string(REGEX REPLACE ".*\ncommands:\n" "" commands_block "${top}")
string(REGEX REPLACE "\n\n.*" "" commands_block "${commands_block}")
string(REGEX MATCHALL "(^|\n)  [a-z]+" names "${commands_block}")
set(commands "")
foreach(n IN LISTS names)
  string(STRIP "${n}" n)
  list(APPEND commands "${n}")
endforeach()

roff_escape("${top}" top_roff)
set(page ".TH FIGURA 1 \"\" \"figura ${version}\" \"User Commands\"\n")
string(APPEND page ".SH NAME\nfigura \\- interference fringe analysis for the optical shop\n")
string(APPEND page ".SH SYNOPSIS\n.B figura\n.I COMMAND\n[\\fIOPTIONS\\fR] [\\fIFILES\\fR]\n.br\n")
string(APPEND page ".B figura\n.I COMMAND\n\\-\\-help\n.br\n.B figura\n\\-\\-version\n")
string(APPEND page ".SH DESCRIPTION\nNewton's rings, surface maps and ISO 10110\\-5 verdicts from photographs of\n")
string(APPEND page "interference fringes. This page is made from the program's help; the\n")
string(APPEND page "reference with examples, JSON fields and file formats is cli.md in\n")
string(APPEND page "/usr/share/doc/figura (docs/cli.md in the source tree).\n")
string(APPEND page ".PP\n.nf\n${top_roff}.fi\n.SH COMMANDS\n")
foreach(c IN LISTS commands)
  run_help(help ${c} --help)
  roff_escape("${help}" help_roff)
  string(APPEND page ".SS figura ${c}\n.nf\n${help_roff}.fi\n")
endforeach()
string(APPEND page ".SH EXIT STATUS\n0 ok (in inspect: every part passes); 1 a part fails or is\n")
string(APPEND page "indeterminate; 2 usage or input error; 130 inspect interrupted.\n")
string(APPEND page ".SH SEE ALSO\ncli.md, method.md, lots.md and safety.md in /usr/share/doc/figura.\n")
file(WRITE "${OUT}.tmp" "${page}")
file(RENAME "${OUT}.tmp" "${OUT}")
