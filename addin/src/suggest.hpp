// "did you mean ...?" for a mistyped word: a message of weft's that names an
// unknown word and lists the accepted words gets the nearest accepted word added
// after the unknown one (model words, design words, bootstrap settings).
#pragma once

#include <string>

namespace weft_addin {

// The accepted word nearest to `word` among `accepted` (words separated by commas,
// semicolons or spaces; "dk=L" counts as "dk"), or "" when none is within two
// edits (one for words of up to four letters).
std::string nearest_word(const std::string& word, const std::string& accepted);

// `message` with ` (did you mean "X"?)` after its unknown word, when it has the
// form ...unknown word "W"...accepted words are[:] LIST and a near word exists.
std::string with_suggestion(const std::string& message);

}  // namespace weft_addin
