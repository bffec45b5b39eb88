// The menu command that sizes a weft block (README "Entering the functions"): the
// job org.weft.BlockSizer, run from the weft menu (Addons.xcu) as
// service:org.weft.BlockSizer?size. It takes the weft formula of the selected cell
// (or of the array block it belongs to), computes it once in place to learn the size
// of its result (the cell functions record the shape of each result they return:
// note_result_shape), and enters it again as an array formula over exactly that
// block, anchored at the same top-left cell. It refuses, with a message box, when
// the block would cover a non-empty cell outside the formula's present block, and
// when the formula gives a weft: message. UNO glue: compiled into the component only.

#include "block_sizer.hpp"

#include "cells.hpp"
#include "functions.hpp"

#include <com/sun/star/awt/MessageBoxButtons.hpp>
#include <com/sun/star/awt/MessageBoxType.hpp>
#include <com/sun/star/awt/Toolkit.hpp>
#include <com/sun/star/awt/XMessageBox.hpp>
#include <com/sun/star/awt/XMessageBoxFactory.hpp>
#include <com/sun/star/awt/XWindowPeer.hpp>
#include <com/sun/star/container/XNamed.hpp>
#include <com/sun/star/frame/Desktop.hpp>
#include <com/sun/star/frame/XController.hpp>
#include <com/sun/star/frame/XDesktop2.hpp>
#include <com/sun/star/frame/XFrame.hpp>
#include <com/sun/star/frame/XFrames.hpp>
#include <com/sun/star/frame/XModel.hpp>
#include <com/sun/star/lang/XServiceInfo.hpp>
#include <com/sun/star/sheet/CellFlags.hpp>
#include <com/sun/star/sheet/XCalculatable.hpp>
#include <com/sun/star/sheet/FormulaToken.hpp>
#include <com/sun/star/sheet/XArrayFormulaRange.hpp>
#include <com/sun/star/sheet/XArrayFormulaTokens.hpp>
#include <com/sun/star/sheet/XFormulaTokens.hpp>
#include <com/sun/star/sheet/XCellRangeAddressable.hpp>
#include <com/sun/star/sheet/XCellRangesQuery.hpp>
#include <com/sun/star/sheet/XSheetCellCursor.hpp>
#include <com/sun/star/sheet/XSheetCellRange.hpp>
#include <com/sun/star/sheet/XSheetCellRanges.hpp>
#include <com/sun/star/sheet/XSpreadsheet.hpp>
#include <com/sun/star/table/CellRangeAddress.hpp>
#include <com/sun/star/table/XCell.hpp>
#include <com/sun/star/table/XCellRange.hpp>
#include <com/sun/star/task/XJobExecutor.hpp>
#include <com/sun/star/uno/XComponentContext.hpp>
#include <com/sun/star/view/XSelectionSupplier.hpp>
#include <cppuhelper/implbase2.hxx>
#include <cppuhelper/supportsservice.hxx>
#include <rtl/ustring.hxx>

#include <cctype>
#include <mutex>
#include <string>
#include <utility>

namespace css = com::sun::star;
using css::uno::Reference;
using css::uno::UNO_QUERY;
using css::uno::UNO_QUERY_THROW;
using rtl::OUString;

namespace weft_addin {

namespace {

std::mutex shape_mutex;
ResultShape last_shape;

OUString ou(const std::string& s) {
    return OUString(s.data(), static_cast<sal_Int32>(s.size()), RTL_TEXTENCODING_UTF8);
}

std::string utf8(const OUString& s) {
    const rtl::OString o = rtl::OUStringToOString(s, RTL_TEXTENCODING_UTF8);
    return std::string(o.getStr(), static_cast<std::size_t>(o.getLength()));
}

// Why the command did nothing: a message box, and the add-in's log for tests.
class Refusal {
public:
    explicit Refusal(std::string text) : text_(std::move(text)) {}
    const std::string& text() const { return text_; }

private:
    std::string text_;
};

void show(const Reference<css::uno::XComponentContext>& ctx, const Reference<css::frame::XFrame>& frame,
          const std::string& text) {
    log_line("size-block: " + text);
    try {
        if (!frame.is()) return;
        Reference<css::awt::XWindowPeer> peer(frame->getContainerWindow(), UNO_QUERY);
        Reference<css::awt::XMessageBoxFactory> factory(css::awt::Toolkit::create(ctx), UNO_QUERY);
        if (!peer.is() || !factory.is()) return;
        Reference<css::awt::XMessageBox> box = factory->createMessageBox(
            peer, css::awt::MessageBoxType_WARNINGBOX, css::awt::MessageBoxButtons::BUTTONS_OK,
            ou("weft: size the result block"), ou(text));
        if (box.is()) box->execute();
    } catch (...) {
        // no window (headless): the log line is all there is
    }
}

std::string address(const Reference<css::sheet::XSpreadsheet>& sheet, sal_Int32 row, sal_Int32 col) {
    Place p;
    Reference<css::container::XNamed> named(sheet, UNO_QUERY);
    if (named.is()) p.sheet = utf8(named->getName());
    p.row = static_cast<std::size_t>(row);
    p.col = static_cast<std::size_t>(col);
    return cell_address(p, 0, 0);
}

bool inside(const css::table::CellRangeAddress& a, sal_Int32 row, sal_Int32 col) {
    return row >= a.StartRow && row <= a.EndRow && col >= a.StartColumn && col <= a.EndColumn;
}

// The first non-empty cell of `target` outside `own`, or "" when there is none.
std::string first_occupied(const Reference<css::sheet::XSpreadsheet>& sheet,
                           const Reference<css::table::XCellRange>& target,
                           const css::table::CellRangeAddress& own) {
    Reference<css::sheet::XCellRangesQuery> query(target, UNO_QUERY_THROW);
    const sal_Int16 any_content = css::sheet::CellFlags::VALUE | css::sheet::CellFlags::DATETIME |
                                  css::sheet::CellFlags::STRING | css::sheet::CellFlags::FORMULA |
                                  css::sheet::CellFlags::ANNOTATION;
    const auto blocks = query->queryContentCells(any_content)->getRangeAddresses();
    for (const css::table::CellRangeAddress& b : blocks)
        for (sal_Int32 r = b.StartRow; r <= b.EndRow; ++r)
            for (sal_Int32 c = b.StartColumn; c <= b.EndColumn; ++c)
                if (!inside(own, r, c)) return address(sheet, r, c);
    return "";
}

void size_selected_block(const Reference<css::uno::XComponentContext>& ctx, Reference<css::frame::XFrame>& frame_out) {
    Reference<css::frame::XDesktop2> desktop = css::frame::Desktop::create(ctx);
    // The document in front (headless there may be no active frame, but there is a
    // current component).
    Reference<css::frame::XModel> model(desktop->getCurrentComponent(), UNO_QUERY);
    Reference<css::frame::XController> controller = model.is() ? model->getCurrentController() : nullptr;
    if (!controller.is()) {
        const Reference<css::frame::XFrame> active = desktop->getCurrentFrame();
        if (active.is()) controller = active->getController();
    }
    if (!controller.is()) {
        // No active document (a hidden one, as in headless use): the newest frame
        // that shows a spreadsheet.
        Reference<css::frame::XFrames> frames = desktop->getFrames();
        for (sal_Int32 i = frames.is() ? frames->getCount() - 1 : -1; i >= 0 && !controller.is(); --i) {
            Reference<css::frame::XFrame> f(frames->getByIndex(i), UNO_QUERY);
            Reference<css::frame::XController> c = f.is() ? f->getController() : nullptr;
            Reference<css::lang::XServiceInfo> doc(c.is() ? c->getModel() : nullptr, UNO_QUERY);
            if (doc.is() && doc->supportsService(ou("com.sun.star.sheet.SpreadsheetDocument"))) controller = c;
        }
    }
    if (controller.is()) frame_out = controller->getFrame();
    Reference<css::view::XSelectionSupplier> selection(controller, UNO_QUERY);
    if (!selection.is()) throw Refusal("open a spreadsheet and select the cell that holds the weft formula");
    Reference<css::sheet::XSheetCellRange> picked(selection->getSelection(), UNO_QUERY);
    Reference<css::sheet::XCellRangeAddressable> picked_at(picked, UNO_QUERY);
    if (!picked.is() || !picked_at.is()) throw Refusal("select one cell that holds a weft formula");
    const Reference<css::sheet::XSpreadsheet> sheet = picked->getSpreadsheet();
    const css::table::CellRangeAddress sel = picked_at->getRangeAddress();

    // The formula's present block: the array it belongs to, or the cell itself.
    Reference<css::table::XCellRange> sheet_range(sheet, UNO_QUERY_THROW);
    Reference<css::table::XCellRange> first = sheet_range->getCellRangeByPosition(
        sel.StartColumn, sel.StartRow, sel.StartColumn, sel.StartRow);
    Reference<css::sheet::XSheetCellCursor> cursor =
        sheet->createCursorByRange(Reference<css::sheet::XSheetCellRange>(first, UNO_QUERY_THROW));
    cursor->collapseToCurrentArray();  // unchanged when the cell is not in an array
    css::table::CellRangeAddress own = Reference<css::sheet::XCellRangeAddressable>(cursor, UNO_QUERY_THROW)->getRangeAddress();
    Reference<css::table::XCellRange> own_range = sheet_range->getCellRangeByPosition(
        own.StartColumn, own.StartRow, own.EndColumn, own.EndRow);
    const bool is_array = own.EndRow > own.StartRow || own.EndColumn > own.StartColumn ||
                          !Reference<css::sheet::XArrayFormulaRange>(own_range, UNO_QUERY_THROW)
                               ->getArrayFormula().isEmpty();
    Reference<css::table::XCell> anchor = sheet_range->getCellByPosition(own.StartColumn, own.StartRow);
    const OUString formula = is_array
        ? Reference<css::sheet::XArrayFormulaRange>(own_range, UNO_QUERY_THROW)->getArrayFormula()
        : anchor->getFormula();
    // The formula moves as its tokens: the array formula's text reads back in another
    // grammar than setFormula takes ({=...} with commas), tokens do not.
    const css::uno::Sequence<css::sheet::FormulaToken> tokens = is_array
        ? Reference<css::sheet::XArrayFormulaTokens>(own_range, UNO_QUERY_THROW)->getArrayTokens()
        : Reference<css::sheet::XFormulaTokens>(anchor, UNO_QUERY_THROW)->getTokens();
    const std::string text = utf8(formula);
    std::string upper;
    for (char ch : text) upper += static_cast<char>(std::toupper(static_cast<unsigned char>(ch)));
    if (upper.find("WEFT.") == std::string::npos)
        throw Refusal(address(sheet, own.StartRow, own.StartColumn) +
                      " holds no weft formula; select the cell where you typed =WEFT....(...)");

    // Compute it once in place: the cell functions record the shape they return.
    {
        std::lock_guard<std::mutex> lock(shape_mutex);
        last_shape = ResultShape();
    }
    // An array block is first made a plain formula in its top-left cell (re-entering
    // the same array formula does not compute it again); a refusal puts it back.
    if (is_array) Reference<css::sheet::XArrayFormulaRange>(own_range, UNO_QUERY_THROW)->setArrayFormula(OUString());
    Reference<css::sheet::XFormulaTokens>(anchor, UNO_QUERY_THROW)->setTokens(tokens);
    struct Restore {
        Reference<css::table::XCellRange> range;
        Reference<css::table::XCell> cell;
        css::uno::Sequence<css::sheet::FormulaToken> tokens;
        bool array;
        bool done = false;
        ~Restore() {
            if (done) return;
            try {
                if (array) {
                    cell->setFormula(OUString());
                    Reference<css::sheet::XArrayFormulaTokens>(range, UNO_QUERY_THROW)->setArrayTokens(tokens);
                }
            } catch (...) {
            }
        }
    } restore{own_range, anchor, tokens, is_array};
    // Compute what is dirty (this formula, and what depends on it).
    Reference<css::sheet::XCalculatable> calc(controller->getModel(), UNO_QUERY);
    if (calc.is()) calc->calculate();
    (void)anchor->getError();
    ResultShape shape;
    {
        std::lock_guard<std::mutex> lock(shape_mutex);
        shape = last_shape;
    }
    if (!shape.known)
        throw Refusal("the formula in " + address(sheet, own.StartRow, own.StartColumn) +
                      " did not compute (is automatic calculation off? Data > Calculate > AutoCalculate)");
    if (!shape.error.empty())
        throw Refusal("the formula in " + address(sheet, own.StartRow, own.StartColumn) +
                      " gives a message, so there is no block to size: " + shape.error);

    const sal_Int32 rows = static_cast<sal_Int32>(shape.rows), cols = static_cast<sal_Int32>(shape.cols);
    Reference<css::table::XCellRange> target = sheet_range->getCellRangeByPosition(
        own.StartColumn, own.StartRow, own.StartColumn + cols - 1, own.StartRow + rows - 1);
    const std::string occupied = first_occupied(sheet, target, own);
    if (!occupied.empty())
        throw Refusal("the result needs " + std::to_string(rows) + " rows x " + std::to_string(cols) +
                      " columns from " + address(sheet, own.StartRow, own.StartColumn) + ", but " + occupied +
                      " is not empty; clear or move those cells, or move the formula, and run the command again");

    anchor->setFormula(OUString());
    Reference<css::sheet::XArrayFormulaTokens>(target, UNO_QUERY_THROW)->setArrayTokens(tokens);
    restore.done = true;
    log_line("size-block: " + std::to_string(rows) + " x " + std::to_string(cols) + " at " +
             address(sheet, own.StartRow, own.StartColumn));
}

class BlockSizer : public cppu::WeakImplHelper2<css::task::XJobExecutor, css::lang::XServiceInfo> {
public:
    explicit BlockSizer(const Reference<css::uno::XComponentContext>& ctx) : ctx_(ctx) {}

    void SAL_CALL trigger(const OUString&) override {
        Reference<css::frame::XFrame> frame;
        try {
            size_selected_block(ctx_, frame);
        } catch (const Refusal& r) {
            show(ctx_, frame, r.text());
        } catch (const css::uno::Exception& e) {
            show(ctx_, frame, "the block could not be sized (" + utf8(e.Message) + ")");
        } catch (const std::exception& e) {
            show(ctx_, frame, std::string("the block could not be sized (") + e.what() + ")");
        } catch (...) {
            show(ctx_, frame, "the block could not be sized");
        }
    }

    OUString SAL_CALL getImplementationName() override { return ou("org.weft.BlockSizer"); }
    sal_Bool SAL_CALL supportsService(const OUString& name) override { return cppu::supportsService(this, name); }
    css::uno::Sequence<OUString> SAL_CALL getSupportedServiceNames() override {
        css::uno::Sequence<OUString> names(1);
        names.getArray()[0] = ou("org.weft.BlockSizer");
        return names;
    }

private:
    Reference<css::uno::XComponentContext> ctx_;
};

}  // namespace

void note_result_shape(std::size_t rows, std::size_t cols, const std::string& error) {
    std::lock_guard<std::mutex> lock(shape_mutex);
    last_shape.known = true;
    last_shape.rows = rows;
    last_shape.cols = cols;
    last_shape.error = error;
}

}  // namespace weft_addin

// Constructor named in weft.components.
extern "C" SAL_DLLPUBLIC_EXPORT css::uno::XInterface* org_weft_BlockSizer_get_implementation(
    css::uno::XComponentContext* ctx, const css::uno::Sequence<css::uno::Any>&) {
    try {
        return cppu::acquire(new weft_addin::BlockSizer(ctx));
    } catch (...) {
        return nullptr;
    }
}
