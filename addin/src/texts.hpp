// Function-wizard texts of every WEFT.* cell function: display name, one-line
// description, and a name and a line for each argument. Calc reads them through
// XAddIn (a CalcAddIns.xcu is ignored for an add-in found through the AddIn
// service), so this table is the one place they live.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

namespace weft_addin {

struct ArgumentText {
    const char* name;         // shown in the wizard and in the formula tooltip
    const char* description;  // one line
};

struct FunctionText {
    const char* method;       // programmatic (IDL) name: part of the file format, never renamed
    const char* display;      // what users type, e.g. WEFT.ESTIMATES
    const char* description;
    std::vector<ArgumentText> arguments;
};

// All functions, in the order of FUNCTIONS.md.
const std::vector<FunctionText>& function_texts();

// nullptr when no function has that programmatic (or display) name.
const FunctionText* find_by_method(const std::string& method);
const FunctionText* find_by_display(const std::string& display);

// The category of every weft function. Calc 7.4 only knows its built-in
// categories and files every other name under "Add-In", so the programmatic
// category is "Add-In" and the display category carries our own name.
extern const char* const programmatic_category;
extern const char* const display_category;

}  // namespace weft_addin
